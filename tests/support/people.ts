/**
 * New people for a test, created the way a person would: through the sign-up form, each from its own loopback
 * address (sign-ups are limited per client address). The confirmation link's effect is written straight into
 * the database (the link itself is tested in tests/integration/accounts.test.ts), and the person's session is
 * written as a cookie (support/session.ts) rather than signed in through the form.
 */
import { makeClearance, makePerson } from '../../seeds/lib/factories';
import type { Role } from '../../src/lib/roles';
import { hashPassword } from '../../src/lib/server/passwords';
import type { Tier } from '../../src/lib/vocabulary';
import { Client, freshLoopbackAddress } from './client';
import { testDb } from './db';

let n = 0;

export async function signUpNew(label: string): Promise<{ client: Client; email: string; name: string; password: string }> {
  n += 1;
  const stamp = `${Date.now().toString(36)}${process.pid.toString(36)}${n}`;
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
 * A new member (made by the seeds' factory, as newPerson: signing up is not the subject) who holds a current
 * clearance for the groups of the given machines, written straight into the test database: for tests whose subject
 * is booking, not the clearance path. Each test file that books takes its own person, so no file eats another's
 * weekly quota, whatever weekday the suite runs on.
 */
export async function clearedNew(label: string, machineCodes: string[]): Promise<{ client: Client; email: string; name: string; password: string; id: string }> {
  return newPerson(label, { clearedFor: machineCodes });
}

/** Current (advanced) clearances for the groups of the given machines, written straight into the test database. */
export async function clearFor(personId: string, machineCodes: string[]): Promise<void> {
  const groups = (await testDb()('machines').whereIn('code', machineCodes).distinct('group_id')) as { group_id: string | null }[];
  for (const { group_id } of groups) if (group_id) await makeClearance(testDb(), { personId, groupId: group_id, state: 'cleared', level: 'advanced' });
}

export interface TestPerson {
  client: Client;
  id: string;
  email: string;
  name: string;
  password: string;
}

const TEST_PASSWORD = 'a long test passphrase for lasers';
let hash: Promise<string> | undefined;
let made = 0;

/**
 * A person of the test file's own, with the roles (and tier) asked for, made by the factory the seeds use and signed
 * in with a written session: a steward, instructor or admin whose queue, quota or mail no other file touches. Faster
 * than signUpNew (no form, one argon2 hash per file); use signUpNew where signing up is part of the story.
 */
export async function newPerson(label: string, opts: { roles?: Role[]; tier?: Tier; clearedFor?: string[]; domain?: string } = {}): Promise<TestPerson> {
  made += 1;
  const stamp = `${Date.now().toString(36)}${process.pid.toString(36)}${made}`;
  // another domain than the institution's (tidewater.example) keeps password sign-in open while a file turns it off there
  const email = `${label}-${stamp}@${opts.domain ?? 'tidewater.example'}`;
  const name = `Test ${label} ${stamp}`;
  hash ??= hashPassword(TEST_PASSWORD);
  const id = await makePerson(testDb(), { email, name, passwordHash: await hash, roles: opts.roles ?? ['member'], ...(opts.tier ? { tier: opts.tier } : {}) });
  if (opts.clearedFor?.length) await clearFor(id, opts.clearedFor);
  const client = await new Client(undefined, freshLoopbackAddress()).useSessionOf(email);
  return { client, id, email, name, password: TEST_PASSWORD };
}

/** Marks a signed-up address as confirmed, as opening the confirmation link would. */
export async function confirmByDatabase(email: string): Promise<void> {
  const n = await testDb()('people').where({ email: email.toLowerCase() }).whereNull('email_confirmed_at').update({ email_confirmed_at: new Date() });
  if (n !== 1) throw new Error(`no unconfirmed person ${email} to confirm`);
}
