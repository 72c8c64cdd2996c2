/**
 * The one connection pool of this process. Only modules in src/lib/server import it; pages and API
 * routes call those modules.
 */
import { createHash } from 'node:crypto';
import knexFactory, { type Knex } from 'knex';
import pg from 'pg';
import './pg-types';
import { env } from './env';
import { currentRequest, onShutdown } from './log';

/** A connection or a transaction: every query helper that may run inside the caller's transaction takes one. */
export type Conn = Knex | Knex.Transaction;

let instance: Knex | undefined;
let genericInstance: Knex | undefined;

/** A pool of `max` connections, each in UTC and without JIT, plus `settings` (more SET statements) of its own. */
function pool(max: number, settings = ''): Knex {
  const k = knexFactory({
    client: 'pg',
    connection: env().DATABASE_URL,
    pool: {
      min: 0,
      max,
      // a connection broken by a database restart is dropped instead of handed out again
      afterCreate: (conn: pg.Client, done: (err: Error | null, conn: pg.Client) => void) => {
        conn.on('error', () => undefined);
        // jit off: the planner's JIT compiles for 0.6–1.2 s whenever a report's estimate is large (a year's
        // utilisation), more than such a statement takes to run; the app's statements gain nothing from it
        conn.query(`SET TIME ZONE 'UTC'; SET jit = off${settings}`, (err) => done(err ?? null, conn));
      },
    },
    acquireConnectionTimeout: 10_000,
  });
  // each request's log line says how many statements it ran (scripts/serve.ts)
  k.on('query', () => {
    const request = currentRequest();
    if (request) request.queries = (request.queries ?? 0) + 1;
  });
  return k;
}

export function db(): Knex {
  if (!instance) {
    instance = pool(env().DATABASE_POOL_MAX);
    onShutdown('database pool', closeDb);
  }
  return instance;
}

/**
 * A second, smaller pool (a quarter of DATABASE_POOL_MAX, at least one) whose connections run every statement on
 * its generic plan (`plan_cache_mode = force_generic_plan`), for a hot read sent as a named statement with
 * `prepared()`: each connection plans it once. PostgreSQL would plan such a statement again for every call when its
 * estimate without the values looks dearer than with them, and planning the week feed's statement cost about as much
 * as running it (decision 0477). Only for statements whose plan does not depend on their values — not the reports,
 * whose periods run from a day to years — and never for a transaction (it is another connection).
 */
export function genericPlanDb(): Knex {
  if (!genericInstance) {
    genericInstance = pool(Math.max(1, Math.ceil(env().DATABASE_POOL_MAX / 4)), '; SET plan_cache_mode = force_generic_plan');
    onShutdown('database pool', closeDb);
  }
  return genericInstance;
}

/** The name a prepared statement of this text gets: the same text, the same name, in every process. */
export function statementName(text: string): string {
  let name = preparedNames.get(text);
  if (!name) {
    name = `bw_${createHash('sha1').update(text).digest('hex').slice(0, 24)}`;
    if (preparedNames.size < 500) preparedNames.set(text, name);
  }
  return name;
}
const preparedNames = new Map<string, string>();

/**
 * Sends `query` as a named prepared statement: each connection parses and plans it once, then PostgreSQL runs it
 * again from its plan cache (a generic plan once that costs no more than planning each time). For the few
 * statements every booking request runs, whose planning cost more PostgreSQL time than running them (decision
 * 0465). The name comes from the statement's text, so a statement whose text changes with its arguments gets one
 * name per text. Only for statements that name their columns: a cached `SELECT *` or `RETURNING *` fails once a
 * migration changes the table's columns under a running process.
 */
export function prepared<Q extends Knex.QueryBuilder | Knex.Raw>(query: Q): Q {
  const { sql } = query.toSQL().toNative();
  return query.options({ name: statementName(sql) }) as Q;
}

/** Runs `work` in one transaction: everything or nothing is written. */
export function transaction<T>(work: (trx: Knex.Transaction) => Promise<T>, config?: Knex.TransactionConfig): Promise<T> {
  return db().transaction(work, config);
}

export async function closeDb(): Promise<void> {
  const pools = [instance, genericInstance].filter((p): p is Knex => p !== undefined);
  instance = undefined;
  genericInstance = undefined;
  await Promise.all(pools.map((p) => p.destroy()));
}

let nestedRunning = 0;
const nestedWaiting: (() => void)[] = [];

/**
 * Runs `work` that holds a pooled connection (e.g. a transaction taking a lock) while it asks the pool for more:
 * at most half the pool does that at once, the rest wait their turn here. Without the limit, as many such requests
 * as the pool has connections each hold one and all wait for a second, until the pool's acquire timeout.
 */
export async function holdingAConnection<T>(work: () => Promise<T>): Promise<T> {
  const limit = Math.max(1, Math.floor(env().DATABASE_POOL_MAX / 2));
  if (nestedRunning < limit) nestedRunning++;
  else await new Promise<void>((resolve) => nestedWaiting.push(resolve)); // handed a running slot by the one finishing
  try {
    return await work();
  } finally {
    const next = nestedWaiting.shift();
    if (next) next();
    else nestedRunning--;
  }
}

/** PostgreSQL error codes the modules map to HTTP answers. */
export const PG = {
  uniqueViolation: '23505',
  foreignKeyViolation: '23503',
  checkViolation: '23514',
  exclusionViolation: '23P01',
  serializationFailure: '40001',
  deadlockDetected: '40P01',
} as const;

export function pgCode(err: unknown): string | undefined {
  return typeof err === 'object' && err !== null && 'code' in err ? String((err as { code: unknown }).code) : undefined;
}

/**
 * Runs `work` (a whole transaction) again when PostgreSQL aborted it as a deadlock or a serialization failure:
 * those say "try again", not "no". Concurrent inserts checked by one exclusion constraint can deadlock each other;
 * on the retry the loser sees the winner's row and gets its ordinary answer (e.g. 23P01).
 */
export async function retryOnConflict<T>(work: () => Promise<T>, attempts = 3): Promise<T> {
  for (let i = 1; ; i++) {
    try {
      return await work();
    } catch (err) {
      const code = pgCode(err);
      if (i >= attempts || (code !== PG.deadlockDetected && code !== PG.serializationFailure)) throw err;
    }
  }
}
