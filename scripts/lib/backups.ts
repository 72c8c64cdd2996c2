/**
 * Shared by `npm run backup` and `npm run restore`: which cluster and database (the same settings and
 * secrets as `npm start`), and running PostgreSQL 15's own client tools (pg_dump, pg_restore) with the
 * password in the child's environment, never on its command line.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import pg from 'pg';
import { PG_BIN, HOST, databaseUrl, demoConfig, ensurePostgres, fail, loadSecrets, say, stopPostgres, type Secrets, type StackConfig } from './stack';

export interface Target {
  cfg: StackConfig;
  secrets: Secrets;
  /** Stop the cluster again at the end (it was not running before). */
  done: () => void;
}

/**
 * The demo cluster of `npm start` (DATA_DIR, PG_PORT, PG_DATABASE as there). Starts PostgreSQL when
 * `npm start` is not running, and `done()` stops it again; refuses when there is no cluster at all
 * unless `allowNewCluster`.
 */
export async function openCluster(opts: { allowNewCluster: boolean }): Promise<Target> {
  const cfg = demoConfig();
  const clusterFile = path.join(cfg.dataDir, 'pg', 'PG_VERSION');
  if (!opts.allowNewCluster && !fs.existsSync(clusterFile)) {
    fail(`There is no database cluster in ${path.join(cfg.dataDir, 'pg')}: nothing to back up. Run \`npm start\` once first (or set DATA_DIR).`);
  }
  const secrets = loadSecrets(cfg);
  const { pgData, startedHere } = await ensurePostgres(cfg, secrets);
  let stopped = !startedHere;
  const done = () => {
    if (stopped) return;
    stopped = true;
    say('Stopping PostgreSQL (it was not running before)');
    stopPostgres(pgData);
  };
  // fail() exits at once; the cluster this run started is stopped on the way out all the same
  process.once('exit', done);
  return { cfg, secrets, done };
}

/** Runs pg_dump / pg_restore as this user, connected over TCP as the app role. */
export function pgTool(t: Target, tool: 'pg_dump' | 'pg_restore', args: string[], database: string): { status: number; out: string } {
  const bin = path.join(PG_BIN, tool);
  if (!fs.existsSync(bin)) fail(`${bin} was not found. Install PostgreSQL 15's client tools (npm start does) or set PG_BIN.`);
  const r = spawnSync(bin, args, {
    encoding: 'utf8',
    env: {
      ...process.env,
      PGHOST: HOST,
      PGPORT: String(t.cfg.pgPort),
      PGUSER: t.cfg.dbUser,
      PGPASSWORD: t.secrets.PG_PASSWORD,
      PGDATABASE: database,
      PGCONNECT_TIMEOUT: '10',
    },
    maxBuffer: 64 * 1024 * 1024,
  });
  return { status: r.status ?? 1, out: `${r.stdout ?? ''}${r.stderr ?? ''}`.trim() };
}

/** Tables (and partitioned tables) outside PostgreSQL's own schemas. */
export async function userTables(t: Target, database: string): Promise<string[]> {
  const c = new pg.Client({ connectionString: databaseUrl(t.cfg, t.secrets, database) });
  await c.connect();
  try {
    const r = await c.query<{ name: string }>(`
      SELECT format('%I.%I', n.nspname, c.relname) AS name
        FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
       WHERE c.relkind IN ('r', 'p') AND n.nspname NOT IN ('pg_catalog', 'information_schema') AND n.nspname NOT LIKE 'pg\\_toast%'
       ORDER BY 1`);
    return r.rows.map((row) => row.name);
  } finally {
    await c.end();
  }
}

/** A file that pg_restore can read as a custom-format archive. */
export function checkArchive(t: Target, file: string): void {
  const r = pgTool(t, 'pg_restore', ['--list', file], 'postgres');
  if (r.status !== 0) fail(`${file} is not a backup made by \`npm run backup\` (a pg_dump custom-format archive):\n${r.out}`);
}
