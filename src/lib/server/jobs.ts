/**
 * Background work through pg-boss (queues kept in PostgreSQL, so nothing is lost when a process or a
 * service stops). Modules enqueue inside their own transaction: the job exists only if the change
 * that asked for it was committed.
 */
import PgBoss from 'pg-boss';
import type { Knex } from 'knex';
import { env } from './env';
import { log, onShutdown } from './log';
import { statementName } from './db';

/** Every queue, with its retry policy. Add a queue here, then its handler in src/lib/server/worker.ts. */
export const QUEUES = {
  'mail.send': { retryLimit: 30, retryDelay: 10, retryBackoff: true, expireInSeconds: 300 },
  // a new booking's confirmation, built and sent by the worker (a mail server that refuses it hands it to mail.send)
  'booking.confirm': { retryLimit: 30, retryDelay: 10, retryBackoff: true, expireInSeconds: 300 },
  // a charge the payment provider could not take yet: retried every 5 s for an hour with the same idempotency key
  'payments.retry': { retryLimit: 720, retryDelay: 5, retryBackoff: false, expireInSeconds: 120 },
  // every provider call (hold, release, capture, fee, refund), recorded with the change that asked for it
  // (payment-intents.ts): 14 retries with exponential back-off, each wait 2^(n+1)..2^(n+2) s (2–4 s, 4–8 s, …), so
  // about 9–18 hours in all; after the last the charge is marked failed and the person and the admins are e-mailed
  'payments.intent': { retryLimit: 14, retryDelay: 2, retryBackoff: true, expireInSeconds: 120 },
  // the daily comparison of our charges and refunds with the provider's
  'payments.reconcile': { retryLimit: 3, retryDelay: 300, expireInSeconds: 600 },
  'booking.sweep': { retryLimit: 2, retryDelay: 20, expireInSeconds: 120 },
  'clearances.sweep': { retryLimit: 3, retryDelay: 30, expireInSeconds: 600 },
  // sessions left open past their booking's end (+ grace): closed and flagged for a steward
  'sessions.sweep': { retryLimit: 2, retryDelay: 20, expireInSeconds: 300 },
  // upkeep that has fallen due: one e-mail to the stewards per item, state and service cycle
  'upkeep.remind': { retryLimit: 2, retryDelay: 60, expireInSeconds: 300 },
  // the day-before reminder of a seat at an induction session
  'induction.remind': { retryLimit: 2, retryDelay: 60, expireInSeconds: 300 },
  // controllers not heard from while their machine is booked: the stewards are e-mailed once
  'controllers.sweep': { retryLimit: 2, retryDelay: 20, expireInSeconds: 120 },
} as const satisfies Record<string, Omit<PgBoss.Queue, 'name'>>;

export type QueueName = keyof typeof QUEUES;

let boss: PgBoss | undefined;
let starting: Promise<PgBoss> | undefined;

/** The app's handle on the queues: it sends, it does not supervise or run schedules. */
export function jobs(): Promise<PgBoss> {
  if (boss) return Promise.resolve(boss);
  starting ??= (async () => {
    const b = new PgBoss({
      connectionString: env().DATABASE_URL,
      max: 2,
      supervise: false,
      schedule: false,
      migrate: false,
    });
    b.on('error', (err) => log.error({ event: 'error', source: 'jobs', message: err.message }, 'job queue error'));
    await b.start();
    boss = b;
    onShutdown('job queue', stopJobs);
    return b;
  })().catch((err) => {
    starting = undefined;
    throw err;
  });
  return starting;
}

/** Installs pg-boss's schema and creates every queue (run by the migrate script and the worker). */
export async function installQueues(connectionString: string): Promise<PgBoss> {
  const b = new PgBoss({ connectionString, max: 4 });
  b.on('error', (err) => log.error({ event: 'error', source: 'jobs', message: err.message }, 'job queue error'));
  await b.start();
  for (const [name, options] of Object.entries(QUEUES)) {
    const existing = await b.getQueue(name);
    if (existing) await b.updateQueue(name, { name, ...options });
    else await b.createQueue(name, { name, ...options });
  }
  return b;
}

/** pg-boss runs its insert on the caller's transaction, so the job commits or rolls back with it. */
function onTransaction(trx: Knex.Transaction): PgBoss.Db {
  return {
    async executeSql(text: string, values: unknown[]) {
      const conn = (await trx.client.acquireConnection()) as { query: (q: { name: string; text: string; values: unknown[] }) => Promise<{ rows: unknown[] }> };
      // pg-boss's insert statements have a fixed text: parsed and planned once per connection
      const result = await conn.query({ name: statementName(text), text, values });
      return { rows: result.rows as never[] };
    },
  };
}

/** A job for enqueueAll: its queue and its data. */
export interface QueuedJob {
  name: QueueName;
  data: object;
}

/**
 * Several jobs (of any queues) in one statement on the caller's transaction: pg-boss's insert, where each queue's own
 * retry policy applies as with enqueue. For a request that records more than one job in its transaction.
 */
export async function enqueueAll(trx: Knex.Transaction, list: readonly QueuedJob[]): Promise<void> {
  if (!list.length) return;
  const b = await jobs();
  await b.insert(list.map((j) => ({ name: j.name, data: j.data })), { db: onTransaction(trx) });
}

export async function enqueue<T extends object>(trx: Knex.Transaction | null, name: QueueName, data: T, options: PgBoss.SendOptions = {}): Promise<string | null> {
  const b = await jobs();
  return b.send(name, data, trx ? { ...options, db: onTransaction(trx) } : options);
}

export async function stopJobs(): Promise<void> {
  const b = boss;
  boss = undefined;
  starting = undefined;
  if (b) await b.stop({ graceful: false, wait: true });
}
