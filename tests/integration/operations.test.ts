/**
 * What a lab's own server needs from the running app: liveness and readiness (readiness follows PostgreSQL
 * down and back up), compressed answers and year-long caching of hashed assets, a request id on every answer
 * that the JSON request log carries, and a graceful stop on SIGTERM that lets a slow request finish.
 */
import fs from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { portOpen, startPostgresAgain, stopPostgresFast, stopServices, type Service } from '../../scripts/lib/stack';
import { Client } from '../support/client';
import { closeTestDb } from '../support/db';
import { APP_URL } from '../support/env';
import { waitUntil } from '../support/wait';
import { startApp } from '../support/processes';

/** The app processes this file started (the serial files share one test process: other files' services are theirs). */
const mine: Service[] = [];

afterAll(async () => {
  await stopServices(mine);
  await closeTestDb();
});

type Ready = { status: string; checks: Record<string, { state: string; pending?: number; applied?: number }> };
const readyz = async () => {
  const res = await fetch(new URL('/readyz', APP_URL()));
  return { status: res.status, body: (await res.json()) as Ready, text: JSON.stringify(res.headers) };
};

/** The app's JSON log lines (the test app writes them to its log file). */
function appLog(): Record<string, unknown>[] {
  const file = path.join(process.env.TEST_DATA_DIR!, 'logs', 'app.log');
  return fs
    .readFileSync(file, 'utf8')
    .split('\n')
    .filter((l) => l.startsWith('{'))
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

describe('health', () => {
  it('/healthz answers without sign-in; /readyz reports each check and no secrets', async () => {
    const h = await fetch(new URL('/healthz', APP_URL()));
    expect(h.status).toBe(200);
    expect(((await h.json()) as { status: string }).status).toBe('up');
    const r = await readyz();
    expect(r.status, JSON.stringify(r.body)).toBe(200);
    expect(r.body.status).toBe('ready');
    expect(r.body.checks.database!.state).toBe('up');
    expect(r.body.checks.migrations!.state).toBe('current');
    expect(r.body.checks.migrations!.pending).toBe(0);
    expect(r.body.checks.migrations!.applied).toBeGreaterThan(40);
    expect(r.body.checks.jobQueue!.state).toBe('up');
    const raw = JSON.stringify(r.body);
    expect(raw).not.toMatch(/postgres:|password|127\.0\.0\.1|secret/i);
  });

  it('/readyz turns not-ready while PostgreSQL is down and ready again when it is back', async () => {
    const pgData = process.env.TEST_PG_DATA!;
    const pgPort = Number(new URL(process.env.DATABASE_URL!).port);
    await closeTestDb();
    stopPostgresFast(pgData);
    try {
      let down: Awaited<ReturnType<typeof readyz>> | undefined;
      await waitUntil('/readyz answering 503', async () => {
        down = await readyz();
        return down.status === 503;
      }, 20_000);
      expect(down!.body.status).toBe('not ready');
      expect(down!.body.checks.database!.state).toBe('down');
      // liveness does not depend on the database
      expect((await fetch(new URL('/healthz', APP_URL()))).status).toBe(200);
    } finally {
      startPostgresAgain(pgData, pgPort);
    }
    await waitUntil('/readyz answering 200 again', async () => (await readyz()).status === 200, 30_000);
    const back = await readyz();
    expect(back.body.checks.database!.state).toBe('up');
    expect(back.body.checks.jobQueue!.state).toBe('up');
  }, 90_000);
});

describe('compression and caching', () => {
  it('pages, JSON, scripts and styles come gzip- or brotli-compressed when asked; hashed assets are cached a year', async () => {
    const page = await fetch(new URL('/signin', APP_URL()), { headers: { 'accept-encoding': 'gzip' } });
    expect(page.status).toBe(200);
    expect(page.headers.get('content-encoding')).toBe('gzip');
    const html = await page.text(); // fetch decompresses it
    expect(html).toContain('<html');

    const plain = await fetch(new URL('/signin', APP_URL()), { headers: { 'accept-encoding': 'identity' } });
    expect(plain.headers.get('content-encoding')).toBeNull();
    await plain.text();

    const member = await Client.as('member');
    const api = await member.fetch('/api/machines', { headers: { 'accept-encoding': 'br' } });
    expect(api.status).toBe(200);
    expect(api.headers.get('content-type')).toContain('application/json');
    expect(api.headers.get('content-encoding')).toBe('br');
    await api.json();

    const assets = [...html.matchAll(/(?:src|href)="(\/_astro\/[^"]+\.(?:js|css))"/g)].map((m) => m[1]!);
    expect(assets.length, 'the sign-in page links hashed scripts or styles').toBeGreaterThan(0);
    for (const asset of assets.slice(0, 3)) {
      const a = await fetch(new URL(asset, APP_URL()), { headers: { 'accept-encoding': 'br, gzip' } });
      expect(a.status, asset).toBe(200);
      expect(a.headers.get('cache-control'), asset).toBe('public, max-age=31536000, immutable');
      const size = (await a.arrayBuffer()).byteLength;
      if (size > 1024) expect(['br', 'gzip'], asset).toContain(a.headers.get('content-encoding'));
    }
  });
});

describe('request ids and the JSON request log', () => {
  it('every answer carries a request id; the log line for it names method, route, status, duration and the person', async () => {
    const member = await Client.as('member');
    const res = await member.get('/api/me');
    expect(res.status).toBe(200);
    const me = (await res.json()) as { id: string };
    const requestId = res.headers.get('x-request-id');
    expect(requestId).toMatch(/^[0-9a-f-]{36}$/);
    let line: Record<string, unknown> | undefined;
    await waitUntil('the log line', async () => {
      line = appLog().find((l) => l.event === 'request' && l.requestId === requestId);
      return line !== undefined;
    }, 5000);
    expect(line).toMatchObject({ method: 'GET', route: '/api/me', status: 200, personId: me.id });
    expect(typeof line!.durationMs).toBe('number');
    // the session look-up is at least one statement, counted on the line
    expect(line!.queries).toBeGreaterThanOrEqual(1);
    expect(typeof line!.time).toBe('string');
    // a request id sent by a client that is not a trusted proxy is not taken over
    const forged = await fetch(new URL('/healthz', APP_URL()), { headers: { 'x-request-id': 'forged-request-id-123' } });
    expect(forged.headers.get('x-request-id')).not.toBe('forged-request-id-123');
  });
});

describe('graceful stop', () => {
  it('SIGTERM during a slow request: no new connections, the request finishes, the process exits 0', async () => {
    const dataDir = process.env.TEST_DATA_DIR!;
    const { service: app, port } = await startApp('app-graceful', { env: { SHUTDOWN_TIMEOUT_MS: '15000' } });
    mine.push(app);
    const exited = new Promise<number | null>((resolve) => app.child.once('exit', (code) => resolve(code)));
    expect((await fetch(`http://127.0.0.1:${port}/readyz`)).status).toBe(200); // opens its database pool

    // a sign-in form post whose body arrives slowly: the route waits for the whole body before it answers
    const body = 'email=nobody%40example.org&password=not-the-password&csrfToken=x&callbackUrl=%2F';
    const socket = net.connect({ port, host: '127.0.0.1' });
    await new Promise<void>((r) => socket.once('connect', () => r()));
    let answer = '';
    socket.on('data', (d) => (answer += d.toString()));
    const ended = new Promise<void>((r) => socket.once('close', () => r()));
    socket.write(
      // with its Origin, so the route reads the whole body (without it the origin check answers 403 at once)
      `POST /api/auth/callback/credentials HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nOrigin: http://127.0.0.1:${port}\r\nContent-Type: application/x-www-form-urlencoded\r\n` +
        `Content-Length: ${body.length}\r\nConnection: keep-alive\r\n\r\n${body.slice(0, 10)}`,
    );
    await new Promise((r) => setTimeout(r, 400));
    process.kill(app.child.pid!, 'SIGTERM');
    await waitUntil('the app refusing new connections', async () => !(await portOpen(port)), 5000);
    expect(app.child.exitCode, 'still running while the request is in flight').toBeNull();
    expect(answer, 'not answered before its body arrived').toBe('');
    await new Promise((r) => setTimeout(r, 600));
    socket.write(body.slice(10));
    await ended; // the server answers, then closes the now idle connection (it is stopping)
    expect(answer).toMatch(/^HTTP\/1\.1 [234]\d\d /); // answered by the route, not cut off
    expect(await exited).toBe(0);
    const log = fs.readFileSync(path.join(dataDir, 'logs', 'app-graceful.log'), 'utf8');
    expect(log).toContain('"event":"shutdown"');
    expect(log).toContain('"closed":"database pool"');
    // stopped when the request was answered, not at the 15 s shutdown limit (the keep-alive connection is closed)
    const stopped = log.split('\n').filter((l) => l.includes('"msg":"stopped"')).pop() ?? '';
    expect(stopped).toContain('"timedOut":false');
  }, 60_000);
});
