/** Direct database access for tests: to look at what a request wrote, never to set up what the API can. */
import knexFactory, { type Knex } from 'knex';
import { DATABASE_URL } from './env';

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
