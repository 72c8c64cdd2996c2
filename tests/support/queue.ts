/**
 * The background worker's queues as the tests see them. Under `npm test` the worker's clock-driven schedules are off
 * (WORKER_SCHEDULES=off, set by scripts/test.ts): no minute sweep races a test, and a test that needs a sweep calls
 * it itself. Queued jobs (e-mail, provider calls) are still run by the worker as they come; `makeDue` makes jobs that
 * wait for a retry delay or a later start due now (a test then waits for the outcome it expects: the worker takes
 * every file's jobs, so waiting for a queue to be empty would wait for other files too).
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
