/**
 * Configuration, not code, picks the services: a second mail fake and a second storage fake are started here
 * on free ports, with a database of their own, and a second app and worker (the bundled production builds,
 * no tsx) are pointed at them through the environment only. A fault with a photo filed there sends its e-mail
 * to the second mail fake and stores its photo in the second storage — and neither reaches the defaults.
 * The database is migrated by the bundled migration runner (node dist-test/scripts/migrate.mjs).
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { HeadObjectCommand, S3Client } from '@aws-sdk/client-s3';
import pg from 'pg';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, maildevArgs, portOpen, spawnService, startStorageFake, stopServices } from '../../scripts/lib/stack';
import { Client } from '../support/client';
import { closeTestDb } from '../support/db';
import { DEMO, DEMO_PASSWORD } from '../support/env';
import { waitUntil } from '../support/wait';
import { freePort, startApp } from '../support/processes';

const main = new URL(process.env.DATABASE_URL!);
const dbName = `${main.pathname.slice(1)}_configured`;
const dbUrl = Object.assign(new URL(main.href), { pathname: `/${dbName}` }).href;
const dataDir = path.join(process.env.TEST_DATA_DIR!, 'second-services');
const bucket = 'beamwarden-second';
let ports: { app: number; smtp: number; mailWeb: number; s3: number };
let appUrl: string;

async function superuser(sql: string): Promise<void> {
  const c = new pg.Client({ connectionString: process.env.TEST_SUPERUSER_URL! });
  await c.connect();
  try {
    await c.query(sql);
  } finally {
    await c.end();
  }
}

function run(args: string[], extra: Record<string, string>): { status: number | null; out: string } {
  const r = spawnSync(process.execPath, args, { cwd: ROOT, env: { ...process.env, ...extra }, encoding: 'utf8', timeout: 120_000 });
  return { status: r.status, out: `${r.stdout}${r.stderr}` };
}

const dropDb = () => superuser(`DROP DATABASE IF EXISTS ${pg.escapeIdentifier(dbName)} WITH (FORCE)`);

beforeAll(async () => {
  ports = { app: await freePort(), smtp: await freePort(), mailWeb: await freePort(), s3: await freePort() };
  await dropDb();
  await superuser(`CREATE DATABASE ${pg.escapeIdentifier(dbName)} OWNER ${pg.escapeIdentifier(decodeURIComponent(main.username))}`);
  const env = { DATABASE_URL: dbUrl };
  // the production migration runner: plain node, compiled migrations
  const migrate = run([path.join(ROOT, 'dist-test/scripts/migrate.mjs')], env);
  expect(migrate.status, migrate.out).toBe(0);
  expect(migrate.out).toMatch(/Applied \d+ migration/);
  // the demo people and machines (the seed runs from the source checkout only)
  const seed = run(['--import', 'tsx', 'scripts/migrate.ts', '--seed-if-empty'], env);
  expect(seed.status, seed.out).toBe(0);
  expect(seed.out).toContain('The schema is up to date');

  const mail = spawnService({ dataDir }, 'maildev', maildevArgs({ dataDir, smtpPort: ports.smtp, mailWebPort: ports.mailWeb }));
  const storage = startStorageFake({ dataDir, s3Port: ports.s3 });
  // generous: maildev takes a while to start on a busy machine
  await waitUntil('the second mail fake', async () => (await portOpen(ports.smtp)) && portOpen(ports.mailWeb), 120_000);
  await waitUntil('the second storage fake', () => portOpen(ports.s3), 60_000);
  const appEnv = {
    NODE_ENV: 'production',
    PORT: String(ports.app),
    DATABASE_URL: dbUrl,
    SMTP_HOST: '127.0.0.1',
    SMTP_PORT: String(ports.smtp),
    SMTP_TLS: 'none',
    S3_ENDPOINT: `http://127.0.0.1:${ports.s3}`,
    S3_BUCKET: bucket,
  };
  spawnService({ dataDir }, 'worker', [path.join(ROOT, 'dist-test/scripts/worker.mjs')], appEnv);
  appUrl = (await startApp('app', { dataDir, port: ports.app, env: appEnv, alsoWatch: [mail, storage], timeoutMs: 60_000 })).url;
}, 360_000);

afterAll(async () => {
  await stopServices();
  await dropDb();
  await closeTestDb();
});

const s3 = (port: number) =>
  new S3Client({ endpoint: `http://127.0.0.1:${port}`, region: 'us-east-1', forcePathStyle: true, credentials: { accessKeyId: 'S3RVER', secretAccessKey: 'S3RVER' } });

async function exists(port: number, Bucket: string, Key: string): Promise<boolean> {
  try {
    await s3(port).send(new HeadObjectCommand({ Bucket, Key }));
    return true;
  } catch {
    return false;
  }
}

async function subjects(mailWebUrl: string): Promise<string[]> {
  const res = await fetch(new URL('/api/email', mailWebUrl));
  return ((await res.json()) as { subject: string }[]).map((m) => m.subject);
}

describe('services chosen by the environment', () => {
  it('the bundled migration runner records the same migration names as the tsx one', async () => {
    const names = async (url: string) => {
      const c = new pg.Client({ connectionString: url });
      await c.connect();
      try {
        return (await c.query<{ name: string }>('SELECT name FROM knex_migrations ORDER BY name')).rows.map((r) => r.name);
      } finally {
        await c.end();
      }
    };
    const second = await names(dbUrl);
    expect(second.length).toBeGreaterThan(40);
    expect(second.every((n) => n.endsWith('.ts'))).toBe(true);
    expect(second).toEqual(await names(main.href));
  });

  it('a fault photo goes to the configured storage and its e-mail to the configured mail server, not to the defaults', async () => {
    // signed in through the form: this site has a database of its own (its people are not the test database's)
    const member = new Client(appUrl);
    expect((await member.signInAs(DEMO.member, DEMO_PASSWORD)).location).not.toContain('error');
    const summary = `Configured services check ${Date.now()}`;
    const photo = await sharp({ create: { width: 64, height: 48, channels: 3, background: { r: 20, g: 90, b: 160 } } }).jpeg().toBuffer();
    const form = new FormData();
    form.set('severity', 'degraded');
    form.set('summary', summary);
    form.set('details', 'Filed by the configured-services test.');
    form.append('photos', new Blob([new Uint8Array(photo)], { type: 'image/jpeg' }), 'lens.jpg');
    const res = await member.fetch('/api/machines/laser-a/faults', { method: 'POST', body: form });
    const text = await res.text();
    expect(res.status, text).toBe(201);
    const faultId = (JSON.parse(text) as { fault: { id: string } }).fault.id;
    const key = `faults/${faultId}/1.jpg`;

    expect(await exists(ports.s3, bucket, key), 'the photo is in the configured storage').toBe(true);
    const defaultPort = Number(process.env.TEST_S3_PORT);
    expect(await exists(defaultPort, process.env.S3_BUCKET ?? 'beamwarden-uploads', key), 'and not in the default storage').toBe(false);
    expect(await exists(defaultPort, bucket, key)).toBe(false);

    const secondMail = `http://127.0.0.1:${ports.mailWeb}`;
    await waitUntil('the steward e-mail at the configured mail server', async () => (await subjects(secondMail)).some((s) => s.includes(summary)), 60_000);
    expect((await subjects(process.env.MAILDEV_URL!)).some((s) => s.includes(summary)), 'nothing at the default mail fake').toBe(false);
  }, 90_000);

  it('a bad variable stops the app at start-up with its name', () => {
    const r = run([path.join(ROOT, 'dist-test/scripts/serve.mjs')], { PORT: String(ports.app), SMTP_TLS: 'sometimes', LOG_FORMAT: 'json' });
    expect(r.status).toBe(1);
    expect(r.out).toContain('SMTP_TLS');
    expect(r.out).toContain('the environment is not valid');
  });
});
