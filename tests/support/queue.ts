/**
 * The background worker's queues as the tests see them. Under `npm test` the worker's clock-driven schedules are off
 * (WORKER_SCHEDULES=off, set by scripts/test.ts): no minute sweep races a test, and a test that needs a sweep calls
 * it itself. Queued jobs (e-mail, provider calls) are still run by the worker as they come; `drainQueue` makes jobs
 * that wait for a retry delay or a later start due now, then waits until the worker has taken them.
 */
import type { QueueName } from '../../src/lib/server/jobs';
import { testDb } from './db';

export type { QueueName };

const WAITING = ['created', 'retry'];

/**
 * Jobs of these queues held back by a retry delay (back-off) or a later start become due now (only the jobs with
 * these ids, when given); returns how many.
 */
export async function makeDue(names: QueueName | QueueName[], ids?: string[]): Promise<number> {
  const list = Array.isArray(names) ? names : [names];
  return testDb()
    .withSchema('pgboss')
    .table('job')
    .whereIn('name', list)
    .modify((q) => (ids ? q.whereIn('id', ids) : q))
    .whereIn('state', WAITING)
    .where('start_after', '>', testDb().fn.now())
    .update({ start_after: testDb().fn.now() });
}

/**
 * Runs the waiting jobs of these queues now: makes them due, then waits until the worker has taken each one (done,
 * failed for good, or failed again and waiting for its next retry). Throws when the worker does not get to them.
 */
export async function drainQueue(names: QueueName | QueueName[], timeoutMs = 30_000): Promise<void> {
  const list = Array.isArray(names) ? names : [names];
  await makeDue(list);
  const until = Date.now() + timeoutMs;
  for (;;) {
    const row = (await testDb()
      .withSchema('pgboss')
      .table('job')
      .whereIn('name', list)
      .where((q) => q.where('state', 'active').orWhere((w) => w.whereIn('state', WAITING).where('start_after', '<=', testDb().fn.now())))
      .count({ n: '*' })
      .first()) as { n: string | number } | undefined;
    if (Number(row?.n ?? 0) === 0) return;
    if (Date.now() > until) throw new Error(`the worker did not run the waiting ${list.join(', ')} jobs within ${timeoutMs / 1000} s`);
    await new Promise((r) => setTimeout(r, 150));
  }
}
