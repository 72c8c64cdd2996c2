/**
 * Health of this process for a load balancer or a monitor: liveness (the process answers) and readiness
 * (the database answers, its schema is the one this build expects, the job queue answers). Answers carry
 * states and counts only — no addresses, names or secrets.
 */
import { db } from './db';

export type CheckState = 'up' | 'down' | 'current' | 'pending' | 'unknown';
export interface Check {
  state: CheckState;
  ms?: number;
  detail?: string;
}
export interface Readiness {
  ready: boolean;
  checks: { database: Check; migrations: Check & { applied?: number; pending?: number }; jobQueue: Check };
}

// generous: a loaded machine can take seconds to answer, and a 503 takes the process out of a load balancer
const TIMEOUT_MS = 5000;

function within<T>(p: Promise<T>, ms = TIMEOUT_MS): Promise<T> {
  return Promise.race([p, new Promise<never>((_, reject) => setTimeout(() => reject(new Error('timed out')), ms).unref())]);
}

/** A short reason a check failed, without host names or credentials. */
function reason(err: unknown): string {
  const e = err as { code?: string; message?: string };
  if (e?.code && /^[A-Z0-9_]+$/.test(e.code)) return e.code;
  return e?.message === 'timed out' ? 'timed out' : 'unavailable';
}

async function timed<T>(fn: () => Promise<T>): Promise<{ value: T; ms: number }> {
  const start = performance.now();
  const value = await within(fn());
  return { value, ms: Math.round(performance.now() - start) };
}

export async function readiness(expected: readonly string[] = __BEAMWARDEN_MIGRATIONS__): Promise<Readiness> {
  const [database, migrations, jobQueue] = await Promise.all([
    timed(() => db().raw('SELECT 1'))
      .then((r): Check => ({ state: 'up', ms: r.ms }))
      .catch((err): Check => ({ state: 'down', detail: reason(err) })),
    timed(async () => (await db()('knex_migrations').pluck('name')) as string[])
      .then(({ value: applied }) => {
        const have = new Set(applied);
        const pending = expected.filter((n) => !have.has(n)).length;
        return { state: pending === 0 ? 'current' : 'pending', applied: applied.length, pending } as Readiness['checks']['migrations'];
      })
      .catch((err): Check => ({ state: 'unknown', detail: reason(err) })),
    // the queue lives in PostgreSQL (pg-boss): its schema answers and holds the queues the worker serves
    timed(async () => {
      const row = (await db().raw('SELECT count(*)::int AS n FROM pgboss.queue')) as { rows: { n: number }[] };
      if (!row.rows[0] || row.rows[0].n === 0) throw Object.assign(new Error('no queues'), { code: 'NO_QUEUES' });
    })
      .then((r): Check => ({ state: 'up', ms: r.ms }))
      .catch((err): Check => ({ state: 'down', detail: reason(err) })),
  ]);
  const ready = database.state === 'up' && migrations.state === 'current' && jobQueue.state === 'up';
  return { ready, checks: { database, migrations, jobQueue } };
}
