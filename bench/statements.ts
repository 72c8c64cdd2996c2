/**
 * BENCH_STATEMENTS=1: what PostgreSQL spends on each statement of a bench phase, from pg_stat_statements.
 *
 * The extension needs `shared_preload_libraries`: the bench cluster gets it through ALTER SYSTEM and one restart
 * (and loses it again the same way on a run without BENCH_STATEMENTS, so ordinary runs measure what they always
 * did). Statements inside functions and triggers are counted too (`track = all`), and the planning time of each
 * statement (`track_planning`). Each phase resets the counters before it and reads them after it.
 */
import pg from 'pg';
import { restartPostgres, say, superuserUrl, type Secrets, type StackConfig } from '../scripts/lib/stack';

const SETTINGS: Record<string, string> = {
  'pg_stat_statements.track': 'all',
  'pg_stat_statements.track_planning': 'on',
};

async function asSuperuser<T>(cfg: StackConfig, secrets: Secrets, db: string, fn: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: superuserUrl(cfg, secrets, db) });
  await c.connect();
  try {
    return await fn(c);
  } finally {
    await c.end();
  }
}

/** Loads pg_stat_statements into the bench cluster (`on`) or takes it out again; restarts the cluster when that changes. */
export async function statementStats(cfg: StackConfig, secrets: Secrets, pgData: string, on: boolean): Promise<void> {
  const su = <T>(fn: (c: pg.Client) => Promise<T>) => asSuperuser(cfg, secrets, 'postgres', fn);
  const loaded = await su(async (c) => {
    const now = (await c.query('SHOW shared_preload_libraries')).rows[0].shared_preload_libraries as string;
    return now.split(',').map((s) => s.trim()).includes('pg_stat_statements');
  });
  if (loaded === on) return;
  say(on ? 'Loading pg_stat_statements into the bench cluster (restart)' : 'Taking pg_stat_statements out of the bench cluster (restart)');
  // the extension's own settings are known only while it is loaded: set after the restart, reset before it
  if (on) {
    await su((c) => c.query(`ALTER SYSTEM SET shared_preload_libraries = 'pg_stat_statements'`));
    restartPostgres(pgData);
    await su(async (c) => {
      for (const [k, v] of Object.entries(SETTINGS)) await c.query(`ALTER SYSTEM SET ${k} = '${v}'`);
      await c.query('SELECT pg_reload_conf()');
    });
  } else {
    await su(async (c) => {
      for (const k of Object.keys(SETTINGS)) await c.query(`ALTER SYSTEM RESET ${k}`);
      await c.query('ALTER SYSTEM RESET shared_preload_libraries');
    });
    restartPostgres(pgData);
  }
}

/** Zeroes the counters (creating the extension in the bench database first, which a recreated database lacks). */
export async function resetStatements(cfg: StackConfig, secrets: Secrets): Promise<void> {
  await asSuperuser(cfg, secrets, cfg.dbName, async (c) => {
    await c.query('CREATE EXTENSION IF NOT EXISTS pg_stat_statements');
    await c.query('SELECT pg_stat_statements_reset()');
  });
}

export interface StatementRow {
  query: string;
  calls: number;
  rows: number;
  execMs: number;
  planMs: number;
  blocks: number;
}

/** The statements run in the bench database since the last reset, most total time first. */
export async function readStatements(cfg: StackConfig, secrets: Secrets): Promise<StatementRow[]> {
  const { rows } = await asSuperuser(cfg, secrets, cfg.dbName, (c) => c.query(
    `SELECT s.query, s.calls::float8 AS calls, s.rows::float8 AS rows, s.total_exec_time AS exec_ms, s.total_plan_time AS plan_ms,
            (s.shared_blks_hit + s.shared_blks_read)::float8 AS blocks
     FROM pg_stat_statements s JOIN pg_database d ON d.oid = s.dbid
     WHERE d.datname = $1 AND s.query NOT LIKE '%pg_stat_statements%'
     ORDER BY s.total_exec_time + s.total_plan_time DESC`,
    [cfg.dbName],
  ));
  return rows.map((r) => ({ query: r.query, calls: r.calls, rows: r.rows, execMs: r.exec_ms, planMs: r.plan_ms, blocks: r.blocks }));
}

/**
 * A markdown table of the statements, per unit of work (`units`, e.g. the bookings made): calls, planning and
 * execution time (ms, wall clock inside PostgreSQL: waits for locks count), rows and buffer pages, most time first.
 * Statements called fewer than once per 20 units are summed into one line.
 */
export function statementTable(list: StatementRow[], units: number, width = 150): string[] {
  const per = (x: number) => x / units;
  const shown = list.filter((s) => s.calls >= units / 20);
  const rest = list.filter((s) => s.calls < units / 20);
  const sum = (l: StatementRow[], f: (s: StatementRow) => number) => l.reduce((a, s) => a + f(s), 0);
  const one = (s: string) => s.replace(/\s+/g, ' ').trim();
  const short = (s: string) => (one(s).length > width ? `${one(s).slice(0, width - 1)}…` : one(s)).replace(/\|/g, '\\|');
  const rows = shown.map((s) => `| ${short(s.query)} | ${per(s.calls).toFixed(2)} | ${(s.planMs / s.calls).toFixed(3)} | ${(s.execMs / s.calls).toFixed(3)} | ${per(s.planMs + s.execMs).toFixed(3)} | ${(s.rows / s.calls).toFixed(1)} | ${(s.blocks / s.calls).toFixed(0)} |`);
  if (rest.length) rows.push(`| (${rest.length} other statements, each under one call per 20) | ${per(sum(rest, (s) => s.calls)).toFixed(2)} | | | ${per(sum(rest, (s) => s.planMs + s.execMs)).toFixed(3)} | | |`);
  const total = per(sum(list, (s) => s.planMs + s.execMs));
  const calls = per(sum(list, (s) => s.calls));
  return [
    '| statement | calls per unit | plan ms per call | exec ms per call | ms per unit (plan + exec) | rows per call | buffer pages per call |',
    '| --- | --- | --- | --- | --- | --- | --- |',
    ...rows,
    `| **all** | ${calls.toFixed(2)} | | | **${total.toFixed(3)}** | | |`,
  ];
}
