/**
 * Direct database access for tests: to look at what a request wrote, never to set up what the API can — with one
 * exception, a current clearance for a test's own booking person (support/people.ts `clearedNew`), whose API path
 * (a quiz, then an in-person sign-off) is the subject of the clearance tests, not of every booking test.
 */
import knexFactory, { type Knex } from 'knex';
import { DATABASE_URL } from './env';
// counts and numerics come back as numbers here too, as in the app (one set of parsers per process)
import '../../src/lib/server/pg-types';

let k: Knex | undefined;
export function testDb(): Knex {
  k ??= knexFactory({ client: 'pg', connection: DATABASE_URL(), pool: { min: 0, max: 4 } });
  return k;
}
export async function closeTestDb(): Promise<void> {
  await k?.destroy();
  k = undefined;
}
/** Forgets failed sign-in counters (tests that trip the throttle clean up after themselves). */
export async function clearSignInLimits(): Promise<void> {
  await testDb()('sign_in_limits').delete();
}
