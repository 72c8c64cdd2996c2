/** New people for a test, created the way a person would: through the sign-up form. */
import { Client } from './client';

let n = 0;

export async function signUpNew(label: string): Promise<{ client: Client; email: string; name: string; password: string }> {
  n += 1;
  const stamp = `${Date.now().toString(36)}${n}`;
  const email = `${label}-${stamp}@tidewater.example`;
  const name = `Test ${label} ${stamp}`;
  const password = 'a long test passphrase for lasers';
  const client = new Client();
  const res = await client.fetch('/signup', {
    method: 'POST',
    body: new URLSearchParams({ name, email, password }),
    headers: { 'content-type': 'application/x-www-form-urlencoded' },
  });
  if (res.status !== 303) throw new Error(`sign-up for ${email} answered ${res.status}`);
  // sign-up answers the same for new and taken addresses and starts no session: sign in as the person would
  const signedIn = await client.signInAs(email, password);
  if (signedIn.location.includes('error')) throw new Error(`sign-in after sign-up for ${email} failed: ${signedIn.location}`);
  return { client, email, name, password };
}
