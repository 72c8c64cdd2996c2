/** Migrations run from zero into an empty database, and the audit log refuses to be rewritten. */
import { spawnSync } from 'node:child_process';
import knexFactory, { type Knex } from 'knex';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeTestDb, testDb } from '../support/db';

const scratchUrl = () => process.env.TEST_SCRATCH_DB_URL!;
let scratch: Knex;
const migrationFiles = import.meta.glob<{ up: (k: Knex) => Promise<void>; down: (k: Knex) => Promise<void> }>('../../migrations/*.ts', { eager: true });

/** The same migration command npm start runs, pointed at the scratch database. */
function migrate(): { status: number | null; output: string } {
  const r = spawnSync(process.execPath, ['--import', 'tsx', 'scripts/migrate.ts'], {
    env: { ...process.env, DATABASE_URL: scratchUrl() },
    encoding: 'utf8',
  });
  return { status: r.status, output: `${r.stdout}${r.stderr}` };
}

async function superuser<T>(fn: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: process.env.TEST_SUPERUSER_URL });
  await c.connect();
  try {
    return await fn(c);
  } finally {
    await c.end();
  }
}

beforeAll(async () => {
  const url = new URL(scratchUrl());
  const name = url.pathname.slice(1);
  await superuser(async (c) => {
    await c.query(`DROP DATABASE IF EXISTS ${pg.escapeIdentifier(name)} WITH (FORCE)`);
    await c.query(`CREATE DATABASE ${pg.escapeIdentifier(name)} OWNER ${pg.escapeIdentifier(decodeURIComponent(url.username))} TEMPLATE template0`);
  });
  scratch = knexFactory({ client: 'pg', connection: scratchUrl(), pool: { min: 0, max: 2 } });
});

afterAll(async () => {
  await scratch?.destroy();
  await closeTestDb();
});

describe('migrations', () => {
  it('run from an empty database to the latest schema, and a second run has nothing to do', async () => {
    const first = migrate();
    expect(first.status, first.output).toBe(0);
    expect(first.output).toMatch(/Applied \d+ migration/);
    const files = Object.keys(migrationFiles);
    expect(Number((await scratch('knex_migrations').count({ n: '*' }).first())?.n)).toBe(files.length);
    for (const table of ['people', 'role_grants', 'sign_in_limits', 'site_settings', 'machines', 'audit_log']) {
      expect(await scratch.schema.hasTable(table), table).toBe(true);
    }
    const again = migrate();
    expect(again.status, again.output).toBe(0);
    expect(again.output).toContain('The schema is up to date');
  });

  it('every migration file is forward-only: its down step refuses', async () => {
    expect(Object.keys(migrationFiles).length).toBeGreaterThanOrEqual(7);
    for (const [file, mod] of Object.entries(migrationFiles)) {
      await expect(Promise.resolve().then(() => mod.down(scratch)), file).rejects.toThrow(/forward-only/);
    }
  });

  it('the machines table refuses values outside the trade’s vocabulary', async () => {
    const bad = { code: 'bad-1', name: 'Bad', power_w: 40, tube_type: 'fibre', wavelength_um: 10.6 };
    await expect(scratch('machines').insert(bad)).rejects.toThrow();
    await expect(scratch('machines').insert({ ...bad, tube_type: 'dc_glass', wavelength_um: 1.06 })).rejects.toThrow();
  });
});

describe('the audit log is append-only', () => {
  it('refuses UPDATE, DELETE and TRUNCATE even from the app’s own role', async () => {
    const db = testDb();
    const [row] = await db('audit_log').insert({ kind: 'test.append_only', subject_type: 'test', summary: 'a test row' }).returning('id');
    await expect(db('audit_log').where({ id: row.id }).update({ summary: 'rewritten' })).rejects.toThrow(/append-only/);
    await expect(db('audit_log').where({ id: row.id }).delete()).rejects.toThrow(/append-only/);
    await expect(db.raw('TRUNCATE audit_log')).rejects.toThrow(/append-only/);
    expect((await db('audit_log').where({ id: row.id }).first()).summary).toBe('a test row');
  });
});
