/**
 * Sign-up that does not tell a stranger whether an address is registered: the page answers the same way
 * in every case, and the address's owner learns the rest by e-mail — a welcome for a new account, a note
 * that an account already exists otherwise. Both paths hash the password, so they take about as long.
 */
import { createPerson, EmailTaken } from './people';
import { queueMail } from './mail';
import { getSettings, publicBaseUrl } from './settings';

export async function signUp(input: { name: string; email: string; password: string }): Promise<void> {
  const [site, base] = await Promise.all([getSettings(), publicBaseUrl()]);
  try {
    const person = await createPerson({ ...input, roles: ['member'] });
    await queueMail(null, person.email, `Welcome to ${site.name}: your account is ready`, {
      greeting: `Hello ${person.name},`,
      paragraphs: [
        `Your ${site.name} account is ready. Sign in with this address and the password you chose.`,
        'To book a laser you first take a short safety quiz, then an instructor signs off your practical induction.',
      ],
      action: { label: 'Sign in', url: `${base}/signin` },
      footnote: 'If you did not create this account, tell a steward; nobody can book with it until an instructor has signed them off.',
    });
  } catch (err) {
    if (!(err instanceof EmailTaken)) throw err;
    await queueMail(null, input.email.toLowerCase(), `${site.name}: you already have an account`, {
      paragraphs: [
        `Someone asked to create a ${site.name} account with this address, which already has one, so nothing was changed.`,
        'If it was you, sign in with your existing password. If it was not you, you can ignore this message.',
      ],
      action: { label: 'Sign in', url: `${base}/signin` },
    });
  }
}
