/**
 * Checking a password at sign-in, with throttling of repeated failures per e-mail and per client
 * address. Counters live in PostgreSQL (rate-limiter-flexible), so every app process shares them.
 */
import { RateLimiterPostgres, type RateLimiterRes } from 'rate-limiter-flexible';
import { db } from './db';
import { findForSignIn } from './people';
import { decoyHash, verifyPassword } from './passwords';

export const SIGN_IN_LIMITS = {
  perEmail: { points: 5, durationS: 15 * 60, blockS: 15 * 60 },
  perAddress: { points: 30, durationS: 15 * 60, blockS: 15 * 60 },
};

let limiters: { email: RateLimiterPostgres; address: RateLimiterPostgres } | undefined;

function limit() {
  limiters ??= {
    email: new RateLimiterPostgres({
      storeClient: db(),
      storeType: 'knex',
      tableName: 'sign_in_limits',
      tableCreated: true,
      keyPrefix: 'email',
      points: SIGN_IN_LIMITS.perEmail.points,
      duration: SIGN_IN_LIMITS.perEmail.durationS,
      blockDuration: SIGN_IN_LIMITS.perEmail.blockS,
    }),
    address: new RateLimiterPostgres({
      storeClient: db(),
      storeType: 'knex',
      tableName: 'sign_in_limits',
      tableCreated: true,
      keyPrefix: 'addr',
      points: SIGN_IN_LIMITS.perAddress.points,
      duration: SIGN_IN_LIMITS.perAddress.durationS,
      blockDuration: SIGN_IN_LIMITS.perAddress.blockS,
    }),
  };
  return limiters;
}

export type SignInOutcome =
  | { ok: true; person: { id: string; email: string; name: string } }
  | { ok: false; reason: 'credentials' }
  | { ok: false; reason: 'throttled'; retryAfterS: number };

function blockedFor(res: RateLimiterRes | null, points: number): number {
  if (!res) return 0;
  return res.consumedPoints > points || (res.consumedPoints >= points && res.msBeforeNext > 0) ? Math.ceil(res.msBeforeNext / 1000) : 0;
}

/** Same answer and about the same time whether the e-mail is unknown, inactive or the password wrong. */
export async function checkSignIn(emailRaw: string, password: string, address: string): Promise<SignInOutcome> {
  const email = emailRaw.trim().toLowerCase().slice(0, 254);
  const { email: byEmail, address: byAddress } = limit();
  const [e, a] = await Promise.all([byEmail.get(email), byAddress.get(address)]);
  const wait = Math.max(blockedFor(e, SIGN_IN_LIMITS.perEmail.points), blockedFor(a, SIGN_IN_LIMITS.perAddress.points));
  if (wait > 0) return { ok: false, reason: 'throttled', retryAfterS: wait };

  const person = email ? await findForSignIn(email) : null;
  const valid = await verifyPassword(person?.passwordHash ?? (await decoyHash()), password);
  if (person && person.active && valid) {
    await byEmail.delete(email);
    return { ok: true, person: { id: person.id, email: person.email, name: person.name } };
  }
  await Promise.all([byEmail.consume(email).catch(() => undefined), byAddress.consume(address).catch(() => undefined)]);
  return { ok: false, reason: 'credentials' };
}
