/**
 * Limits on requests that send e-mail (sign-up, password reset, confirmation resend), per address asked for and
 * per client address, kept in PostgreSQL with the sign-in counters. Over the limit → 429 `too_many_requests`
 * with Retry-After.
 */
import { RateLimiterPostgres, RateLimiterRes } from 'rate-limiter-flexible';
import { db } from './db';
import { env } from './env';
import { DomainError } from './errors';

export type LimitedAction = 'signup' | 'reset' | 'resend' | 'invite';

/** The limits; sign-ups per client address are a setting (SIGN_UP_LIMIT_PER_ADDRESS, 20 by default). */
export function requestLimits(): Record<LimitedAction, { perEmail: number; perAddress: number; durationS: number }> {
  return {
    signup: { perEmail: 3, perAddress: env().SIGN_UP_LIMIT_PER_ADDRESS, durationS: 60 * 60 },
    reset: { perEmail: 5, perAddress: 20, durationS: 60 * 60 },
    resend: { perEmail: 5, perAddress: 20, durationS: 60 * 60 },
    // an admin sending someone a new invitation: 3 an hour to one address, 30 an hour from one admin
    invite: { perEmail: 3, perAddress: 30, durationS: 60 * 60 },
  };
}

const cache = new Map<string, RateLimiterPostgres>();

function limiter(action: LimitedAction, by: 'email' | 'addr'): RateLimiterPostgres {
  const key = `${action}-${by}`;
  let l = cache.get(key);
  if (!l) {
    const c = requestLimits()[action];
    l = new RateLimiterPostgres({
      storeClient: db(), storeType: 'knex', tableName: 'sign_in_limits', tableCreated: true,
      keyPrefix: key, points: by === 'email' ? c.perEmail : c.perAddress, duration: c.durationS,
    });
    cache.set(key, l);
  }
  return l;
}

export class TooManyRequests extends DomainError {
  constructor(public readonly retryAfterS: number) {
    super('too_many', 'too_many_requests', `Too many requests. Try again in ${Math.max(1, Math.ceil(retryAfterS / 60))} minute(s).`, undefined, { retryAfterSeconds: retryAfterS });
  }
}

/** Counts one request; throws TooManyRequests when the e-mail or the client address is over its limit. */
export async function countRequest(action: LimitedAction, emailRaw: string, address: string): Promise<void> {
  const email = emailRaw.trim().toLowerCase().slice(0, 254);
  const results = await Promise.allSettled([limiter(action, 'addr').consume(address), limiter(action, 'email').consume(email || '(none)')]);
  let wait = 0;
  for (const r of results) {
    if (r.status === 'rejected') {
      if (r.reason instanceof RateLimiterRes) wait = Math.max(wait, Math.ceil(r.reason.msBeforeNext / 1000));
      else throw r.reason;
    }
  }
  if (wait > 0) throw new TooManyRequests(wait);
}
