/**
 * Shared by `npm run backup` and `npm run restore`: which cluster and database (the same settings and
 * secrets as `npm start`), and running PostgreSQL 15's own client tools (pg_dump, pg_restore) with the
 * password in the child's environment, never on its command line.
 */
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { CreateBucketCommand, GetObjectCommand, HeadBucketCommand, HeadObjectCommand, ListObjectsV2Command, PutObjectCommand, S3Client } from '@aws-sdk/client-s3';
import fs from 'node:fs';
import path from 'node:path';
import pg from 'pg';
import {
  PG_BIN, HOST, databaseUrl, demoConfig, ensurePostgres, fail, loadSecrets, portOpen, say, startStorageFake, stopPostgres, stopServices, waitForPort,
  type Secrets, type StackConfig,
} from './stack';

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

// ---------------------------------------------------------------------------------------------
// Uploaded files (fault photos, safety data sheets): copied from object storage next to the dump as
// <backup>.files/<key> with a manifest, and put back by restore. Storage is the configured one
// (S3_ENDPOINT, S3_BUCKET, keys) or, when none is configured, the local storage fake of `npm start`,
// started for the copy when it is not running.

export interface FileStore {
  client: S3Client;
  bucket: string;
  /** Stop the storage fake again when this run started it. */
  close: () => Promise<void>;
}

export async function openFileStore(cfg: StackConfig): Promise<FileStore> {
  let startedHere = false;
  let endpoint = process.env.S3_ENDPOINT;
  if (!endpoint) {
    endpoint = `http://${HOST}:${cfg.s3Port}`;
    if (!(await portOpen(cfg.s3Port))) {
      say(`Starting the local storage fake on ${HOST}:${cfg.s3Port} for the files`);
      const s = startStorageFake(cfg);
      await waitForPort(cfg.s3Port, 'the storage fake', s.child);
      startedHere = true;
    }
  }
  const client = new S3Client({
    endpoint,
    region: process.env.S3_REGION ?? 'us-east-1',
    forcePathStyle: !['false', '0'].includes(process.env.S3_FORCE_PATH_STYLE ?? 'true'),
    credentials: { accessKeyId: process.env.S3_ACCESS_KEY_ID ?? 'S3RVER', secretAccessKey: process.env.S3_SECRET_ACCESS_KEY ?? 'S3RVER' },
  });
  return {
    client,
    bucket: process.env.S3_BUCKET ?? 'beamwarden-uploads',
    close: async () => {
      client.destroy();
      if (startedHere) await stopServices();
    },
  };
}

interface ManifestEntry {
  key: string;
  contentType: string;
  bytes: number;
  sha256: string;
}

const safeKey = (key: string) => key.length > 0 && !key.split('/').some((part) => part === '' || part === '.' || part === '..');

/** Copies every object of the bucket into `dir` (created 0700) with manifest.json; returns the count and bytes. */
export async function backupFiles(store: FileStore, dir: string): Promise<{ files: number; bytes: number }> {
  fs.mkdirSync(path.join(dir, 'objects'), { recursive: true, mode: 0o700 });
  const manifest: ManifestEntry[] = [];
  let token: string | undefined;
  let missingBucket = false;
  do {
    let page;
    try {
      page = await store.client.send(new ListObjectsV2Command({ Bucket: store.bucket, ContinuationToken: token }));
    } catch (err) {
      if ((err as { name?: string }).name === 'NoSuchBucket') {
        missingBucket = true;
        break;
      }
      throw err;
    }
    for (const o of page.Contents ?? []) {
      if (!o.Key || !safeKey(o.Key)) continue;
      const got = await store.client.send(new GetObjectCommand({ Bucket: store.bucket, Key: o.Key }));
      const bytes = Buffer.from(await got.Body!.transformToByteArray());
      const file = path.join(dir, 'objects', o.Key);
      fs.mkdirSync(path.dirname(file), { recursive: true, mode: 0o700 });
      fs.writeFileSync(file, bytes, { mode: 0o600 });
      manifest.push({ key: o.Key, contentType: got.ContentType ?? 'application/octet-stream', bytes: bytes.byteLength, sha256: createHash('sha256').update(bytes).digest('hex') });
    }
    token = page.IsTruncated ? page.NextContinuationToken : undefined;
  } while (token);
  if (missingBucket) say(`The bucket ${store.bucket} does not exist yet: no uploaded files to copy`);
  fs.writeFileSync(path.join(dir, 'manifest.json'), JSON.stringify({ bucket: store.bucket, files: manifest }, null, 2), { mode: 0o600 });
  return { files: manifest.length, bytes: manifest.reduce((n, m) => n + m.bytes, 0) };
}

/** Puts back every file of a backup that the bucket is missing (never overwrites); checks each file's hash first. */
export async function restoreFiles(store: FileStore, dir: string): Promise<{ restored: number; present: number }> {
  const { files } = JSON.parse(fs.readFileSync(path.join(dir, 'manifest.json'), 'utf8')) as { files: ManifestEntry[] };
  // HEAD on the bucket (the local fake answers a one-key listing of a bucket with many keys with a 500)
  try {
    await store.client.send(new HeadBucketCommand({ Bucket: store.bucket }));
  } catch (err) {
    const e = err as { name?: string; $metadata?: { httpStatusCode?: number } };
    if (e.name !== 'NotFound' && e.name !== 'NoSuchBucket' && e.$metadata?.httpStatusCode !== 404) throw err;
    await store.client.send(new CreateBucketCommand({ Bucket: store.bucket }));
  }
  let restored = 0;
  let present = 0;
  for (const f of files) {
    if (!safeKey(f.key)) fail(`The backup names a file outside its folder (${f.key}); nothing more was restored.`);
    const bytes = fs.readFileSync(path.join(dir, 'objects', f.key));
    if (createHash('sha256').update(bytes).digest('hex') !== f.sha256) fail(`The backed-up file ${f.key} is damaged (its checksum does not match).`);
    try {
      await store.client.send(new HeadObjectCommand({ Bucket: store.bucket, Key: f.key }));
      present++;
      continue;
    } catch (err) {
      const e = err as { name?: string; $metadata?: { httpStatusCode?: number } };
      if (e.name !== 'NotFound' && e.$metadata?.httpStatusCode !== 404) throw err;
    }
    await store.client.send(new PutObjectCommand({ Bucket: store.bucket, Key: f.key, Body: bytes, ContentType: f.contentType, ContentLength: bytes.byteLength }));
    restored++;
  }
  return { restored, present };
}

/** Keeps the newest `keep` backups (dump and files together); 0 keeps all. Returns the names removed. */
export function pruneBackups(dir: string, keep: number): string[] {
  if (!keep) return [];
  const stamps = fs
    .readdirSync(dir)
    .map((f) => /^beamwarden-(\d{8}T\d{6}Z)\.dump$/.exec(f)?.[1])
    .filter((s): s is string => Boolean(s))
    .sort()
    .reverse();
  const removed: string[] = [];
  for (const stamp of stamps.slice(keep)) {
    for (const name of [`beamwarden-${stamp}.dump`, `beamwarden-${stamp}.files`]) {
      const p = path.join(dir, name);
      if (fs.existsSync(p)) {
        fs.rmSync(p, { recursive: true, force: true });
        removed.push(name);
      }
    }
  }
  return removed;
}
