/**
 * A person's own account: password reset and change, e-mail confirmation, invitations and closing the account.
 * Links sent by e-mail carry a random token of which only the SHA-256 is stored; each works once and expires.
 * Every path that must end other sessions raises `people.session_epoch` (session.ts refuses older tokens).
 */
import { createHash, randomBytes } from 'node:crypto';
import type { Knex } from 'knex';
import { db, transaction } from './db';
import { env } from './env';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { queueMail } from './mail';
import { hashPassword, verifyPassword } from './passwords';
import { createPerson, EmailTaken, getPerson, type Person } from './people';
import { getSettings, publicBaseUrl } from './settings';
import { clearSignInCounters } from './sign-in';
import { cancelFutureBookingsOf } from './bookings/cancel';
import { countRequest } from './request-limits';
import { passwordProblem } from '@lib/password-rules';
import type { Role } from '@lib/roles';
import type { Tier } from '@lib/vocabulary';

export type TokenPurpose = 'reset' | 'confirm' | 'invite';

export const CONFIRM_LINK_HOURS = 48;
export const INVITE_LINK_DAYS = 7;

const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');

/** Issues a link token for a person (earlier unused tokens of the same purpose stop working). */
async function issueToken(trx: Knex.Transaction, personId: string, purpose: TokenPurpose, ttlMs: number): Promise<string> {
  const token = randomBytes(32).toString('base64url');
  await trx('account_tokens').where({ person_id: personId, purpose }).whereNull('used_at').update({ used_at: trx.fn.now() });
  await trx('account_tokens').insert({ person_id: personId, purpose, token_hash: sha256(token), expires_at: new Date(Date.now() + ttlMs) });
  return token;
}

/** Takes a token for one of `purposes` (locks it); 404 unknown, 410 `token_used` / `token_expired`. */
async function takeToken(trx: Knex.Transaction, token: string, purposes: TokenPurpose[]): Promise<{ id: string; personId: string; purpose: TokenPurpose }> {
  const row = await trx('account_tokens').where({ token_hash: sha256(token) }).whereIn('purpose', purposes).forUpdate().first('id', 'person_id', 'purpose', 'expires_at', 'used_at');
  if (!row) throw new DomainError('not_found', 'token_unknown', 'This link is not valid. Ask for a new one.');
  if (row.used_at) throw new DomainError('gone', 'token_used', 'This link has already been used. Ask for a new one if you need it.');
  if (new Date(row.expires_at).getTime() <= Date.now()) throw new DomainError('gone', 'token_expired', 'This link has expired. Ask for a new one.');
  await trx('account_tokens').where({ id: row.id }).update({ used_at: trx.fn.now() });
  return { id: row.id, personId: row.person_id, purpose: row.purpose };
}

/** Looks at a token without using it (for the page that shows the form): its purpose, or why it cannot be used. */
export async function inspectToken(token: string): Promise<{ ok: true; purpose: TokenPurpose; email: string } | { ok: false; code: 'token_unknown' | 'token_used' | 'token_expired' }> {
  const row = await db()('account_tokens as t').join('people as p', 'p.id', 't.person_id').where('t.token_hash', sha256(token)).first('t.purpose', 't.expires_at', 't.used_at', 'p.email');
  if (!row) return { ok: false, code: 'token_unknown' };
  if (row.used_at) return { ok: false, code: 'token_used' };
  if (new Date(row.expires_at).getTime() <= Date.now()) return { ok: false, code: 'token_expired' };
  return { ok: true, purpose: row.purpose, email: row.email };
}

function weakPassword(password: string, context: { email: string; name: string }): never | void {
  const problem = passwordProblem(password, context);
  if (problem) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { password: problem });
}

// ------------------------------------------------------------------------------------------------
// Password reset

/** Sends a reset link when the address belongs to an open, active account; says nothing either way. */
export async function requestPasswordReset(emailRaw: string): Promise<void> {
  const email = emailRaw.trim().toLowerCase();
  const row = await db()('people').whereRaw('lower(email) = lower(?)', [email]).whereNull('closed_at').where({ active: true }).first('id', 'email', 'name');
  if (!row) return;
  const [site, base] = await Promise.all([getSettings(), publicBaseUrl()]);
  const minutes = env().RESET_LINK_MINUTES;
  await transaction(async (trx) => {
    const token = await issueToken(trx, row.id, 'reset', minutes * 60_000);
    await recordAudit(trx, { actorId: row.id, kind: 'password.reset_requested', subjectType: 'person', subjectId: row.id, summary: `Password reset link sent to ${row.name}` });
    await queueMail(trx, row.email, `${site.name}: reset your password`, {
      greeting: `Hello ${row.name},`,
      paragraphs: [
        `Someone asked to reset the password of your ${site.name} account. Open the link below to choose a new one; it works once, for ${minutes} minutes.`,
        'Setting a new password signs you out everywhere else.',
      ],
      action: { label: 'Choose a new password', url: `${base}/reset-password?token=${token}` },
      footnote: 'If you did not ask for this, ignore this message: your password stays as it is.',
    });
  });
}

/**
 * Sets a new password from a reset or invitation link: the link is used up, every other session ends, the
 * address counts as confirmed (the person proved they read its mail) and the sign-in counters are cleared.
 */
export async function completePasswordLink(token: string, password: string): Promise<Person> {
  const person = await transaction(async (trx) => {
    const t = await takeToken(trx, token, ['reset', 'invite']);
    const p = await trx('people').where({ id: t.personId }).forUpdate().first('id', 'email', 'name', 'active', 'closed_at');
    if (!p || !p.active || p.closed_at) throw new DomainError('gone', 'token_expired', 'This account is no longer open.');
    weakPassword(password, p);
    await trx('people')
      .where({ id: p.id })
      .update({ password_hash: await hashPassword(password), session_epoch: trx.raw('session_epoch + 1'), email_confirmed_at: trx.raw('coalesce(email_confirmed_at, now())'), updated_at: trx.fn.now() });
    await recordAudit(trx, {
      actorId: p.id,
      kind: t.purpose === 'invite' ? 'password.set_from_invitation' : 'password.reset',
      subjectType: 'person',
      subjectId: p.id,
      summary: t.purpose === 'invite' ? `${p.name} set a password from their invitation` : `${p.name} reset their password by e-mail link; other sessions ended`,
    });
    const fresh = await getPerson(p.id, trx);
    if (!fresh) throw new Error('person vanished');
    return fresh;
  });
  await clearSignInCounters(person.email);
  return person;
}

/** Changes the password of a signed-in person who knows the current one; other sessions end. */
export async function changePassword(personId: string, current: string, next: string): Promise<Person> {
  return transaction(async (trx) => {
    const p = await trx('people').where({ id: personId }).forUpdate().first('id', 'email', 'name', 'password_hash');
    if (!p) throw new DomainError('not_found', 'not_found', 'No person has that id.');
    if (!(await verifyPassword(p.password_hash, current))) throw new DomainError('forbidden', 'wrong_password', 'The current password is not right.');
    weakPassword(next, p);
    await trx('people').where({ id: p.id }).update({ password_hash: await hashPassword(next), session_epoch: trx.raw('session_epoch + 1'), updated_at: trx.fn.now() });
    await recordAudit(trx, { actorId: p.id, kind: 'password.changed', subjectType: 'person', subjectId: p.id, summary: `${p.name} changed their password; other sessions ended` });
    const fresh = await getPerson(p.id, trx);
    if (!fresh) throw new Error('person vanished');
    return fresh;
  });
}

// ------------------------------------------------------------------------------------------------
// Sign-up with confirmation, resend, invitation

async function queueConfirmation(trx: Knex.Transaction, person: { id: string; email: string; name: string }): Promise<void> {
  const [site, base] = await Promise.all([getSettings(), publicBaseUrl()]);
  const token = await issueToken(trx, person.id, 'confirm', CONFIRM_LINK_HOURS * 3_600_000);
  await queueMail(trx, person.email, `${site.name}: confirm your e-mail address`, {
    greeting: `Hello ${person.name},`,
    paragraphs: [
      `Thank you for joining ${site.name}. Confirm that this address is yours, then sign in with the password you chose.`,
      'To book a laser you first take a short safety quiz, then an instructor signs off your practical induction.',
    ],
    action: { label: 'Confirm my address', url: `${base}/confirm-email?token=${token}` },
    footnote: `The link works once, for ${CONFIRM_LINK_HOURS} hours. If you did not create this account, ignore this message.`,
  });
}

/**
 * Sign-up that does not tell a stranger whether an address is registered: the caller answers the same way in
 * every case; a new account gets a confirmation link, the owner of a taken address a note that it has one.
 */
export async function signUp(input: { name: string; email: string; password: string }): Promise<void> {
  try {
    await createPerson({ ...input, roles: ['member'], confirmed: false, then: (trx, person) => queueConfirmation(trx, person) });
  } catch (err) {
    if (!(err instanceof EmailTaken)) throw err;
    const [site, base] = await Promise.all([getSettings(), publicBaseUrl()]);
    await queueMail(null, input.email.toLowerCase(), `${site.name}: you already have an account`, {
      paragraphs: [
        `Someone asked to create a ${site.name} account with this address, which already has one, so nothing was changed.`,
        'If it was you, sign in with your existing password, or choose a new one with "Forgot your password?" on the sign-in page. If it was not you, you can ignore this message.',
      ],
      action: { label: 'Sign in', url: `${base}/signin` },
    });
  }
}

/** Sends a new confirmation link when the address has an unconfirmed account; says nothing either way. */
export async function resendConfirmation(emailRaw: string): Promise<void> {
  const row = await db()('people').whereRaw('lower(email) = lower(?)', [emailRaw.trim()]).whereNull('email_confirmed_at').whereNull('closed_at').where({ active: true }).first('id', 'email', 'name');
  if (!row) return;
  await transaction((trx) => queueConfirmation(trx, row));
}

/** Confirms an address from its link; the person can sign in from now on. */
export async function confirmEmail(token: string): Promise<{ email: string }> {
  return transaction(async (trx) => {
    const t = await takeToken(trx, token, ['confirm']);
    const p = await trx('people').where({ id: t.personId }).first('id', 'email', 'name');
    await trx('people').where({ id: t.personId }).update({ email_confirmed_at: trx.raw('coalesce(email_confirmed_at, now())'), updated_at: trx.fn.now() });
    await recordAudit(trx, { actorId: p.id, kind: 'person.email_confirmed', subjectType: 'person', subjectId: p.id, summary: `${p.name} confirmed their e-mail address` });
    return { email: p.email };
  });
}

/** An admin adds a person: no password is chosen for them; they get an invitation link to set their own. */
export async function invitePerson(actorId: string, input: { name: string; email: string; roles: Role[]; tier?: Tier }): Promise<Person> {
  try {
    return await createPerson({
      ...input,
      password: randomBytes(32).toString('base64url'),
      actorId,
      confirmed: false,
      then: (trx, person) => queueInvitation(trx, person),
    });
  } catch (err) {
    if (err instanceof EmailTaken) throw new DomainError('conflict', 'email_taken', 'That address already has an account.');
    throw err;
  }
}

/** The invitation e-mail: a link to choose a password, good for INVITE_LINK_DAYS days. */
async function queueInvitation(trx: Knex.Transaction, person: { id: string; email: string; name: string }, again = false): Promise<void> {
  const [site, base] = await Promise.all([getSettings(), publicBaseUrl()]);
  const token = await issueToken(trx, person.id, 'invite', INVITE_LINK_DAYS * 86_400_000);
  await queueMail(trx, person.email, again ? `Your new invitation to ${site.name}` : `You are invited to ${site.name}`, {
    greeting: `Hello ${person.name},`,
    paragraphs: [
      `An administrator of ${site.name} made an account for you on Beamwarden, where the laser room's bookings, clearances and faults are kept. Choose your password to start.`,
      ...(again ? ['This link replaces the one in any earlier invitation, which no longer works.'] : []),
    ],
    action: { label: 'Choose my password', url: `${base}/reset-password?token=${token}` },
    footnote: `The link works once, for ${INVITE_LINK_DAYS} days. An administrator can send a new one.`,
  });
}

/**
 * The people among `personIds` who were invited by an admin and have not set a password yet (their address is
 * unconfirmed: choosing a password from any e-mailed link, or signing in through the institution, confirms it).
 */
export async function awaitingInvitation(personIds: readonly string[]): Promise<Set<string>> {
  if (personIds.length === 0) return new Set();
  const rows = (await db()('people as p')
    .whereIn('p.id', [...personIds])
    .whereNull('p.email_confirmed_at')
    .whereNull('p.closed_at')
    .whereExists(db()('account_tokens as t').whereRaw('t.person_id = p.id').where('t.purpose', 'invite'))
    .select('p.id')) as { id: string }[];
  return new Set(rows.map((r) => r.id));
}

/**
 * An admin sends a fresh invitation to a person they invited who has not chosen a password yet: a new link is
 * e-mailed and every earlier invitation link stops working (removed, so it answers "not valid"). 404 unknown
 * person; 409 `not_awaiting_invitation` once they have set a password (or were never invited, or are
 * deactivated); 429 when asked too often for the same person. Audited as `person.invitation_resent`.
 */
export async function resendInvitation(actorId: string, personId: string): Promise<{ email: string; name: string; expiresInDays: number }> {
  const p = await db()('people').where({ id: personId }).first('id', 'email', 'name', 'active', 'closed_at');
  if (!p || p.closed_at) throw new DomainError('not_found', 'not_found', 'No person has that id.');
  if (!(await awaitingInvitation([p.id])).has(p.id)) {
    throw new DomainError('conflict', 'not_awaiting_invitation', `${p.name} has already chosen a password (or was not invited by an admin): they sign in as usual, and "Forgot your password?" sends them a reset link.`);
  }
  if (!p.active) throw new DomainError('conflict', 'not_awaiting_invitation', `${p.name} is deactivated: reactivate the account before sending an invitation.`);
  // limits (request-limits.ts, `invite`): per invited address, and per admin (their id stands in for the client address)
  await countRequest('invite', p.email, `admin:${actorId}`);
  await transaction(async (trx) => {
    const person = await trx('people').where({ id: p.id }).forUpdate().first('id', 'email', 'name', 'email_confirmed_at');
    if (!person || person.email_confirmed_at) throw new DomainError('conflict', 'not_awaiting_invitation', `${p.name} has already chosen a password.`);
    // the old links go: a replaced invitation answers "not valid", never "already used"
    await trx('account_tokens').where({ person_id: p.id, purpose: 'invite' }).whereNull('used_at').delete();
    await queueInvitation(trx, person, true);
    await recordAudit(trx, {
      actorId,
      kind: 'person.invitation_resent',
      subjectType: 'person',
      subjectId: p.id,
      summary: `A new invitation was sent to ${p.name} <${p.email}>; earlier invitation links no longer work`,
    });
  });
  return { email: p.email, name: p.name, expiresInDays: INVITE_LINK_DAYS };
}

// ------------------------------------------------------------------------------------------------
// Closing an account

export const CLOSED_NAME = 'Closed account';

/**
 * The person closes their own account: future bookings cancelled, sign-in disabled, every session ended, the
 * profile anonymised (name, e-mail, password, saved card, calendar feed). Charges, sign-offs, sessions and faults
 * stay for the records, now under the placeholder name. Audited as `person.closed`.
 */
export async function closeAccount(personId: string, password: string | null): Promise<void> {
  // the cancelled bookings' card holds are released by the worker (intents recorded with the cancellations)
  await transaction(async (trx) => {
    const p = await trx('people').where({ id: personId }).forUpdate().first('id', 'name', 'email', 'password_hash', 'closed_at');
    if (!p || p.closed_at) throw new DomainError('not_found', 'not_found', 'No open account.');
    if (password !== null && !(await verifyPassword(p.password_hash, password))) throw new DomainError('forbidden', 'wrong_password', 'The password is not right.');
    const ids = await cancelFutureBookingsOf(trx, personId, personId);
    await trx('people')
      .where({ id: personId })
      .update({
        name: CLOSED_NAME,
        email: `closed-${personId}@closed.invalid`,
        password_hash: await hashPassword(randomBytes(32).toString('base64url')),
        active: false,
        deactivated_at: trx.fn.now(),
        closed_at: trx.fn.now(),
        cost_centre: null,
        session_epoch: trx.raw('session_epoch + 1'),
        updated_at: trx.fn.now(),
      });
    await trx('account_tokens').where({ person_id: personId }).delete();
    await trx('calendar_feeds').where({ person_id: personId }).delete();
    await trx('payment_customers').where({ person_id: personId }).update({ card_source_id: null, card_brand: null, card_last4: null, updated_at: trx.fn.now() });
    await trx('waitlist_entries').where({ person_id: personId }).delete();
    await recordAudit(trx, {
      actorId: personId,
      kind: 'person.closed',
      subjectType: 'person',
      subjectId: personId,
      summary: `A person closed their account (${ids.length} future booking(s) cancelled); kept records show "${CLOSED_NAME}"`,
      after: { active: false, cancelledBookings: ids.length },
    });
    return ids;
  });
}
