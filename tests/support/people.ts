/**
 * New people for a test, created the way a person would: through the sign-up form, each from its own loopback
 * address (sign-ups are limited per client address). The confirmation link's effect is written straight into
 * the database (the link itself is tested in tests/integration/accounts.test.ts), and the person's session is
 * written as a cookie (support/session.ts) rather than signed in through the form.
 */
import { Client, freshLoopbackAddress } from './client';
import { testDb } from './db';

let n = 0;

export async function signUpNew(label: string): Promise<{ client: Client; email: string; name: string; password: string }> {
  n += 1;
  const stamp = `${Date.now().toString(36)}${n}`;
  const email = `${label}-${stamp}@tidewater.example`;
  const name = `Test ${label} ${stamp}`;
  const password = 'a long test passphrase for lasers';
  const client = new Client(undefined, freshLoopbackAddress());
  const res = await client.fetch('/signup', {
    method: 'POST',
    body: new URLSearchParams({ name, email, password }),
    headers: { 'content-type': 'application/x-www-form-urlencoded' },
  });
  if (res.status !== 303) throw new Error(`sign-up for ${email} answered ${res.status}`);
  await confirmByDatabase(email);
  // sign-up answers the same for new and taken addresses and starts no session: the session a sign-in would give
  await client.useSessionOf(email);
  return { client, email, name, password };
}

/**
 * A new person (through sign-up) who holds a current clearance for the groups of the given machines, written
 * straight into the test database: for tests whose subject is booking, not the clearance path. Each test file
 * that books takes its own person, so no file eats another's weekly quota, whatever weekday the suite runs on.
 */
export async function clearedNew(label: string, machineCodes: string[]): Promise<{ client: Client; email: string; name: string; password: string; id: string }> {
  const made = await signUpNew(label);
  const db = testDb();
  const person = await db('people').where({ email: made.email }).first('id');
  if (!person) throw new Error(`no person row for ${made.email}`);
  const groups = (await db('machines').whereIn('code', machineCodes).distinct('group_id')) as { group_id: string | null }[];
  const now = new Date();
  for (const { group_id } of groups) {
    if (!group_id) continue;
    await db('clearances').insert({
      person_id: person.id,
      group_id,
      state: 'cleared',
      level: 'advanced',
      quiz_passed_at: now,
      cleared_at: now,
      expires_at: new Date(now.getTime() + 365 * 86_400_000),
    });
  }
  return { ...made, id: person.id };
}

/** Marks a signed-up address as confirmed, as opening the confirmation link would. */
export async function confirmByDatabase(email: string): Promise<void> {
  const n = await testDb()('people').where({ email: email.toLowerCase() }).whereNull('email_confirmed_at').update({ email_confirmed_at: new Date() });
  if (n !== 1) throw new Error(`no unconfirmed person ${email} to confirm`);
}
