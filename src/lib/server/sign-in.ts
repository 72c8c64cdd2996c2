/**
 * Checking a password at sign-in, with throttling that slows guessing without letting a stranger lock a
 * person out. Counters live in PostgreSQL (rate-limiter-flexible), so every app process shares them:
 * - the strict limit is on the pair (e-mail, client address): 5 failures (SIGN_IN_PAIR_LIMIT) in 15 minutes close
 *   that pair for 15 minutes — the person signing in from anywhere else is not affected;
 * - a looser per-e-mail count (from any address) adds a growing wait after 10 failures (SIGN_IN_FREE_FAILURES) in
 *   an hour (2 s, 4 s, 8 s … at most 5 minutes between tries), never a hard block;
 * - a client address with 30 failures in 15 minutes (any e-mails) is refused for 15 minutes;
 * - a successful sign-in or a password reset (which proves control of the address) clears the e-mail's counters.
 */
import { RateLimiterPostgres, type RateLimiterRes } from 'rate-limiter-flexible';
import { db } from './db';
import { env } from './env';
import { findForSignIn } from './people';
import { decoyHash, verifyPassword } from './passwords';
import { passwordSignInRefusedFor } from './institution';

/** The limits; the pair's count and the e-mail's free failures are settings (env.ts), the rest fixed. */
export function signInLimits() {
  const e = env();
  return {
    perPair: { points: e.SIGN_IN_PAIR_LIMIT, durationS: 15 * 60, blockS: 15 * 60 },
    perAddress: { points: 30, durationS: 15 * 60, blockS: 15 * 60 },
    perEmail: { freeFailures: e.SIGN_IN_FREE_FAILURES, durationS: 60 * 60, firstWaitS: 2, maxWaitS: 5 * 60 },
  };
}

/** The wait before the next try after `failures` failures for one e-mail (0 while under the free count). */
export function emailWaitS(failures: number): number {
  const { freeFailures, firstWaitS, maxWaitS } = signInLimits().perEmail;
  if (failures < freeFailures) return 0;
  return Math.min(maxWaitS, firstWaitS * 2 ** Math.min(20, failures - freeFailures));
}

function limiter(keyPrefix: string, points: number, duration: number, blockDuration = 0): RateLimiterPostgres {
  return new RateLimiterPostgres({ storeClient: db(), storeType: 'knex', tableName: 'sign_in_limits', tableCreated: true, keyPrefix, points, duration, blockDuration });
}

let limiters: { pair: RateLimiterPostgres; address: RateLimiterPostgres; email: RateLimiterPostgres; emailWait: RateLimiterPostgres } | undefined;

function limit() {
  const l = signInLimits();
  limiters ??= {
    pair: limiter('pair', l.perPair.points, l.perPair.durationS, l.perPair.blockS),
    address: limiter('addr', l.perAddress.points, l.perAddress.durationS, l.perAddress.blockS),
    email: limiter('email', 1_000_000, l.perEmail.durationS),
    emailWait: limiter('email-wait', 1, 1),
  };
  return limiters;
}

export type SignInOutcome =
  | { ok: true; person: { id: string; email: string; name: string } }
  | { ok: false; reason: 'credentials' | 'unconfirmed' | 'institution' }
  | { ok: false; reason: 'throttled'; retryAfterS: number };

function blockedFor(res: RateLimiterRes | null, points: number): number {
  if (!res) return 0;
  return res.consumedPoints > points || (res.consumedPoints >= points && res.msBeforeNext > 0) ? Math.ceil(res.msBeforeNext / 1000) : 0;
}

const pairKey = (email: string, address: string) => `${email}|${address}`;

/** Forgets every sign-in counter of an e-mail (after a successful sign-in or a password reset). */
export async function clearSignInCounters(emailRaw: string): Promise<void> {
  const email = emailRaw.trim().toLowerCase();
  await db()('sign_in_limits')
    .where('key', `email:${email}`)
    .orWhere('key', `email-wait:${email}`)
    .orWhere('key', 'like', `pair:${email.replace(/[\\%_]/g, (c) => `\\${c}`)}|%`)
    .delete();
}

/** Same answer and about the same time whether the e-mail is unknown, inactive or the password wrong. */
export async function checkSignIn(emailRaw: string, password: string, address: string): Promise<SignInOutcome> {
  // an address with U+0000 in it is no one's (and PostgreSQL's text cannot hold it): checked as an empty one
  const email = emailRaw.includes('\u0000') ? '' : emailRaw.trim().toLowerCase().slice(0, 254);
  const l = limit();
  const [p, a, w] = await Promise.all([l.pair.get(pairKey(email, address)), l.address.get(address), l.emailWait.get(email)]);
  const { perPair, perAddress } = signInLimits();
  const wait = Math.max(blockedFor(p, perPair.points), blockedFor(a, perAddress.points), blockedFor(w, 1));
  if (wait > 0) return { ok: false, reason: 'throttled', retryAfterS: wait };
  // people of an institution that signs in through its own identity provider: no password sign-in (a domain rule, not a secret)
  if (email && (await passwordSignInRefusedFor(email))) return { ok: false, reason: 'institution' };

  const person = email ? await findForSignIn(email) : null;
  const valid = await verifyPassword(person?.passwordHash ?? (await decoyHash()), password);
  if (person && person.active && valid) {
    if (!person.emailConfirmed) return { ok: false, reason: 'unconfirmed' };
    await clearSignInCounters(email);
    return { ok: true, person: { id: person.id, email: person.email, name: person.name } };
  }
  const [, , counted] = await Promise.all([
    l.pair.consume(pairKey(email, address)).catch(() => undefined),
    l.address.consume(address).catch(() => undefined),
    l.email.consume(email).catch(() => undefined),
  ]);
  const next = emailWaitS(counted?.consumedPoints ?? 0);
  if (next > 0) await l.emailWait.block(email, next).catch(() => undefined);
  return { ok: false, reason: 'credentials' };
}
