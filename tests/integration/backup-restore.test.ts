/**
 * npm run backup and npm run restore, round trip: the test database is dumped, restored into a new
 * database, and every table has the same number of rows in both. Runs the real scripts against the
 * test cluster (DATA_DIR, PG_PORT and PG_DATABASE pointed at what npm test started): the round trip as
 * `npm run backup` / `npm run restore` run them (tsx), the other cases as a production install does (the bundles
 * in dist-test/scripts that npm test built, under plain node: the same code without compiling it again per run).
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { DeleteObjectCommand, S3Client } from '@aws-sdk/client-s3';
import pg from 'pg';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client } from '../support/client';
import { closeTestDb } from '../support/db';

const source = new URL(process.env.DATABASE_URL!);
const sourceDb = source.pathname.slice(1);
const restoredDb = `${sourceDb}_restored`;

function run(script: 'backup' | 'restore', args: string[] = [], extra: Record<string, string> = {}, how: 'npm run' | 'bundle' = 'bundle'): { status: number | null; out: string } {
  const command = how === 'npm run' ? ['--import', 'tsx', `scripts/${script}.ts`] : [`dist-test/scripts/${script}.mjs`];
  const r = spawnSync(process.execPath, [...command, ...args], {
    env: {
      ...process.env,
      DATA_DIR: process.env.TEST_DATA_DIR!,
      PG_PORT: source.port,
      PG_DATABASE: sourceDb,
      ...extra,
    },
    encoding: 'utf8',
    timeout: 120_000,
  });
  return { status: r.status, out: `${r.stdout}${r.stderr}` };
}

async function withClient<T>(url: string, fn: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: url });
  await c.connect();
  try {
    return await fn(c);
  } finally {
    await c.end();
  }
}

const superuser = <T>(fn: (c: pg.Client) => Promise<T>) => withClient(process.env.TEST_SUPERUSER_URL!, fn);
const urlOf = (db: string) => Object.assign(new URL(source.href), { pathname: `/${db}` }).href;

/** Exact row counts of every table outside PostgreSQL's own schemas. */
async function rowCounts(db: string): Promise<Record<string, number>> {
  return withClient(urlOf(db), async (c) => {
    const tables = await c.query<{ name: string }>(`
      SELECT format('%I.%I', n.nspname, c.relname) AS name FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
       WHERE c.relkind IN ('r', 'p') AND n.nspname NOT IN ('pg_catalog', 'information_schema') AND n.nspname NOT LIKE 'pg\\_toast%' ORDER BY 1`);
    if (tables.rows.length === 0) return {};
    // one statement for every table (one round trip, one snapshot)
    const counts = await c.query(`SELECT ${tables.rows.map(({ name }, i) => `(SELECT count(*) FROM ${name}) AS c${i}`).join(', ')}`);
    return Object.fromEntries(tables.rows.map(({ name }, i) => [name, Number(counts.rows[0][`c${i}`])]));
  });
}

const filesDb = `${sourceDb}_restored_files`;
const dropRestored = () =>
  superuser(async (c) => {
    for (const name of [restoredDb, filesDb]) await c.query(`DROP DATABASE IF EXISTS ${pg.escapeIdentifier(name)} WITH (FORCE)`);
  });
let dumpFile: string | undefined;
const made: string[] = [];

beforeAll(dropRestored);
afterAll(async () => {
  await dropRestored();
  for (const f of [dumpFile, dumpFile?.replace(/\.dump$/, '.files'), ...made]) if (f) fs.rmSync(f, { recursive: true, force: true });
  await closeTestDb();
});

describe('backup and restore', () => {
  it('round trip: every table has the same row count after restoring into a new database', async () => {
    const before = await rowCounts(sourceDb);
    const backup = run('backup', [], {}, 'npm run');
    expect(backup.status, backup.out).toBe(0);
    const after = await rowCounts(sourceDb);
    const m = /Wrote (\S+beamwarden-\d{8}T\d{6}Z\.dump)/.exec(backup.out);
    expect(m, backup.out).not.toBeNull();
    dumpFile = path.resolve(m![1]!);
    expect(path.dirname(dumpFile)).toBe(path.join(path.resolve(process.env.TEST_DATA_DIR!), 'backups'));
    expect(fs.statSync(dumpFile).mode & 0o077).toBe(0); // readable by its owner only: it holds password hashes
    expect(fs.readFileSync(dumpFile).subarray(0, 5).toString()).toBe('PGDMP'); // pg_dump's custom format

    const restore = run('restore', [dumpFile, '--database', restoredDb], {}, 'npm run');
    expect(restore.status, restore.out).toBe(0);
    expect(restore.out).toContain(`Created the empty database ${restoredDb}`);

    const restored = await rowCounts(restoredDb);
    expect(Object.keys(restored).sort()).toEqual(Object.keys(before).sort());
    expect(Object.keys(restored)).toContain('public.audit_log');
    expect(restored['public.people']).toBeGreaterThanOrEqual(6);
    // tables that nothing wrote to while the dump ran must match exactly; the app's own tables all qualify
    const steady = Object.keys(before).filter((t) => before[t] === after[t]);
    expect(steady.filter((t) => t.startsWith('public.')).sort()).toEqual(Object.keys(before).filter((t) => t.startsWith('public.')).sort());
    for (const t of steady) expect(restored[t], t).toBe(before[t]);

    // the restored audit log is still append-only (its trigger came along)
    await withClient(urlOf(restoredDb), async (c) => {
      await expect(c.query('DELETE FROM audit_log')).rejects.toThrow(/append-only/);
    });
  });

  it('refuses to restore into a database that holds tables, and changes nothing there', async () => {
    expect(dumpFile).toBeDefined();
    const before = await rowCounts(sourceDb);
    const r = run('restore', [dumpFile!]);
    expect(r.status).toBe(1);
    expect(r.out).toMatch(new RegExp(`The database ${sourceDb} already holds \\d+ table`));
    expect(r.out).toContain('--database');
    // the app's own tables are untouched (the job queue's tables in the pgboss schema change as the worker runs)
    const own = (counts: Record<string, number>) => Object.fromEntries(Object.entries(counts).filter(([t]) => t.startsWith('public.')));
    expect(own(await rowCounts(sourceDb))).toEqual(own(before));
  });

  it('refuses a file that is not a backup, and a missing file', async () => {
    const bogus = path.join(process.env.TEST_DATA_DIR!, 'not-a-backup.dump');
    fs.writeFileSync(bogus, 'hello');
    try {
      const r = run('restore', [bogus, '--database', `${restoredDb}_x`]);
      expect(r.status).toBe(1);
      expect(r.out).toContain('is not a backup made by `npm run backup`');
    } finally {
      fs.rmSync(bogus, { force: true });
    }
    const missing = run('restore', ['no-such-file.dump']);
    expect(missing.status).toBe(1);
    expect(missing.out).toContain('does not exist');
    const none = run('restore');
    expect(none.status).toBe(1);
    expect(none.out).toContain('Usage: npm run restore FILE');
  });

  it('uploaded files: a fault photo is backed up with the database, wiped from storage, and put back by restore; old backups are pruned', async () => {
    // a note (no status change, no e-mails) with one photo, filed by its own reporter
    const member = await Client.as('member');
    const photo = await sharp({ create: { width: 80, height: 60, channels: 3, background: { r: 200, g: 120, b: 40 } } }).jpeg().toBuffer();
    const form = new FormData();
    form.set('severity', 'note');
    form.set('summary', `Backup round trip photo ${Date.now()}`);
    form.append('photos', new Blob([new Uint8Array(photo)], { type: 'image/jpeg' }), 'bed.jpg');
    const filed = await member.fetch('/api/machines/laser-c/faults', { method: 'POST', body: form });
    const filedText = await filed.text();
    expect(filed.status, filedText).toBe(201);
    const fault = (JSON.parse(filedText) as { fault: { id: string; photos: { url: string }[] } }).fault;
    const photoUrl = fault.photos[0]!.url;
    const original = Buffer.from(await (await member.get(photoUrl)).arrayBuffer());
    expect(original.byteLength).toBeGreaterThan(100);

    // an old backup that the retention setting removes
    const backups = path.join(path.resolve(process.env.TEST_DATA_DIR!), 'backups');
    const old = path.join(backups, 'beamwarden-20000101T000000Z');
    fs.mkdirSync(`${old}.files`, { recursive: true });
    fs.writeFileSync(`${old}.dump`, 'old');
    made.push(`${old}.dump`, `${old}.files`);

    const backup = run('backup', [], { BACKUP_KEEP: '2' });
    expect(backup.status, backup.out).toBe(0);
    const file = path.resolve(/Wrote (\S+beamwarden-\d{8}T\d{6}Z\.dump)/.exec(backup.out)![1]!);
    const filesDir = file.replace(/\.dump$/, '.files');
    made.push(file, filesDir);
    expect(backup.out).toMatch(/Copied \d+ uploaded file/);
    const key = `faults/${fault.id}/1.jpg`;
    expect(fs.readFileSync(path.join(filesDir, 'objects', key)).equals(original)).toBe(true);
    expect(fs.statSync(filesDir).mode & 0o077).toBe(0);
    expect(backup.out).toContain('Removed beamwarden-20000101T000000Z.dump (BACKUP_KEEP=2)');
    expect(fs.existsSync(`${old}.dump`) || fs.existsSync(`${old}.files`)).toBe(false);

    // wipe: this file's photo is gone from storage (nothing else is touched)
    const s3 = new S3Client({ endpoint: process.env.S3_ENDPOINT!, region: 'us-east-1', forcePathStyle: true, credentials: { accessKeyId: 'S3RVER', secretAccessKey: 'S3RVER' } });
    await s3.send(new DeleteObjectCommand({ Bucket: process.env.S3_BUCKET ?? 'beamwarden-uploads', Key: key }));
    s3.destroy();
    expect((await member.get(photoUrl)).status).not.toBe(200);

    // restore (into a new database, as restore requires) puts the missing file back
    const restore = run('restore', [file, '--database', filesDb]);
    expect(restore.status, restore.out).toBe(0);
    expect(restore.out).toMatch(/Restored [1-9]\d* uploaded file\(s\) into bucket/);
    const back = await member.get(photoUrl);
    expect(back.status).toBe(200);
    expect(Buffer.from(await back.arrayBuffer()).equals(original)).toBe(true);
    // and the restored database holds the fault that refers to it
    await withClient(urlOf(filesDb), async (c) => {
      expect((await c.query('SELECT photos FROM faults WHERE id = $1', [fault.id])).rows[0].photos[0].key).toBe(key);
    });
  }, 120_000);
});
