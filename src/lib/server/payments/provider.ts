/**
 * The payment provider client: the ONLY place that talks to the provider (the Stripe SDK; stripe-stateful-mock
 * locally). Card path: customers + sources + charges (PaymentIntents are not in the local fake). Every provider call
 * carries an idempotency key built from our charge id and the operation, so a retry (the worker, a second click, a
 * lost answer) never takes money twice.
 */
import { AsyncLocalStorage } from 'node:async_hooks';
import Stripe from 'stripe';
import { env } from '@lib/server/env';
import { DomainError } from '@lib/server/errors';
import { log } from '@lib/server/log';

let client: Stripe | undefined;
let quickClient: Stripe | undefined;
/** Set while a request makes its one try at once: provider calls give up sooner, the job does the rest. */
const quick = new AsyncLocalStorage<boolean>();

/** The provider client: the worker's waits PAYMENTS_WORKER_TIMEOUT_MS (10 s) for an answer, a request's one try PAYMENTS_REQUEST_TIMEOUT_MS (3 s). */
export function provider(): Stripe {
  const make = (timeout: number) => {
    const c = new Stripe(env().STRIPE_SECRET_KEY, {
      ...apiAddress(),
      // retries are ours (pg-boss), with the same idempotency key
      maxNetworkRetries: 0,
      timeout,
    });
    // one line per provider call: method, path, status and time; never the key, the body or card details
    c.on('response', (r: Stripe.ResponseEvent) => {
      log.info({ event: 'provider_call', provider: 'payments', method: r.method, path: r.path, status: r.status, durationMs: r.elapsed, providerRequestId: r.request_id }, 'payment provider call');
    });
    return c;
  };
  if (quick.getStore()) return (quickClient ??= make(env().PAYMENTS_REQUEST_TIMEOUT_MS));
  return (client ??= make(env().PAYMENTS_WORKER_TIMEOUT_MS));
}

/** STRIPE_API_BASE (a URL) when set, else the host, port and protocol of the local fake. */
function apiAddress(): { host: string; port: number; protocol: 'http' | 'https' } {
  const e = env();
  if (e.STRIPE_API_BASE) {
    const u = new URL(e.STRIPE_API_BASE);
    const protocol = u.protocol === 'http:' ? 'http' : 'https';
    return { host: u.hostname, port: u.port ? Number(u.port) : protocol === 'https' ? 443 : 80, protocol };
  }
  return { host: e.STRIPE_API_HOST, port: e.STRIPE_API_PORT, protocol: e.STRIPE_API_PROTOCOL };
}

export type ProviderError = { type?: string; code?: string; message?: string; statusCode?: number };

export function classify(err: unknown): 'card' | 'unreachable' | 'missing' | 'other' {
  const e = err as ProviderError;
  if (e?.type === 'StripeCardError') return 'card';
  if (e?.type === 'StripeConnectionError' || e?.type === 'StripeAPIError' || e?.type === 'StripeRateLimitError') return 'unreachable';
  if (typeof e?.statusCode === 'number' && e.statusCode >= 500) return 'unreachable';
  if (e?.code === 'resource_missing') return 'missing';
  return 'other';
}

export const key = (chargeId: string, op: string) => `beamwarden-charge-${chargeId}-${op}`;

/** Verifies a provider webhook signature; throws DomainError 400 when it does not match. */
export function verifyWebhook(body: string, signature: string | null): { id: string; type: string; data: { object: Record<string, unknown> } } {
  if (!signature) throw new DomainError('bad_request', 'bad_signature', 'The webhook signature header is missing.');
  try {
    return provider().webhooks.constructEvent(body, signature, env().STRIPE_WEBHOOK_SECRET) as never;
  } catch {
    throw new DomainError('bad_request', 'bad_signature', 'The webhook signature does not match.');
  }
}

export const unreachable = () => new DomainError('unavailable', 'provider_unreachable', 'The card service cannot be reached just now. Try again in a minute.');

/** The provider has not answered yet: thrown so the job retries. */
export class ProviderNotReady extends Error {}

/** Runs `work` as a request's one try: provider calls give up sooner, the job does the rest. */
export function quickly<T>(work: () => Promise<T>): Promise<T> {
  return quick.run(true, work);
}
