/**
 * Two app processes on one PostgreSQL, as a site behind a proxy runs them: a second app is started here on
 * another port (spawnService from scripts/lib/stack.ts, the same built entry and environment as the first).
 * Sessions, the sign-in throttle and the no-double-booking rule hold across both, since none of them lives
 * in process memory.
 */
import net from 'node:net';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, portOpen, spawnService, stopServices, type Service } from '../../scripts/lib/stack';
import { iso, machines, setTestRules, siteTime } from '../support/booking';
import { Client } from '../support/client';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';
import { APP_URL, DEMO, DEMO_PASSWORD } from '../support/env';

let second: Service;
let secondUrl: string;

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as net.AddressInfo;
      srv.close(() => resolve(port));
    });
  });
}

beforeAll(async () => {
  const port = await freePort();
  second = spawnService({ dataDir: process.env.TEST_DATA_DIR! }, 'app-2', [path.join(ROOT, 'dist-test/server/entry.mjs')], {
    NODE_ENV: 'production',
    PORT: String(port),
  });
  secondUrl = `http://127.0.0.1:${port}`;
  const until = Date.now() + 30_000;
  while (!(await portOpen(port))) {
    if (second.child.exitCode !== null) throw new Error(`the second app exited (${second.child.exitCode}); see .data/test/logs/app-2.log`);
    if (Date.now() > until) throw new Error('the second app did not listen within 30 s');
    await new Promise((r) => setTimeout(r, 150));
  }
}, 60_000);

afterAll(async () => {
  await stopServices();
  await clearSignInLimits();
  await closeTestDb();
});

describe('two app processes on one database', () => {
  it('a session made by one process is honoured by the other', async () => {
    const one = await Client.as('member');
    const two = new Client(secondUrl);
    const res = await two.fetch('/api/me', { headers: { cookie: one.cookieHeader() } });
    expect(res.status).toBe(200);
    expect(((await res.json()) as { email: string }).email).toBe(DEMO.member);
  });

  it('the sign-in throttle counts failures made on either process', async () => {
    const victim = DEMO.student;
    for (let i = 0; i < 5; i++) {
      const r = await new Client(i % 2 === 0 ? APP_URL() : secondUrl).signInAs(victim, `wrong-${i}`);
      expect(r.location).toContain('code=credentials');
    }
    for (const base of [APP_URL(), secondUrl]) {
      const r = await new Client(base).signInAs(victim, DEMO_PASSWORD);
      expect(r.location, base).toContain('code=throttled');
    }
    await clearSignInLimits();
  });

  it('20 simultaneous requests for one slot, split over both processes: exactly one 201', async () => {
    const admin = await Client.as('admin');
    const laser = (await machines(admin))['laser-b'];
    await setTestRules(admin, laser.id);
    // 22 days ahead: clear of the seed's bookings and of the other test files' days
    const startsAt = siteTime(22, 13);
    const endsAt = siteTime(22, 14);
    const people = ['member', 'steward', 'instructor'] as const;
    const clients = [
      ...(await Promise.all(people.map((p) => Client.as(p)))),
      ...(await Promise.all(people.map((p) => Client.as(p, secondUrl)))),
    ];
    const results = await Promise.all(
      Array.from({ length: 20 }, (_, i) =>
        clients[i % clients.length]!.send('POST', '/api/bookings', {
          machineId: laser.id, startsAt: iso(startsAt), endsAt: iso(endsAt), materials: [], notes: '',
        }),
      ),
    );
    const statuses = results.map((r) => r.status);
    expect(statuses.filter((s) => s === 201), statuses.join(',')).toHaveLength(1);
    expect(statuses.filter((s) => s === 409)).toHaveLength(19);
    const rows = await testDb()('bookings')
      .where({ machine_id: laser.id })
      .whereIn('state', ['reserved', 'checked in'])
      .whereRaw('tstzrange(starts_at, occupied_until) && tstzrange(?, ?)', [startsAt, endsAt]);
    expect(rows).toHaveLength(1);
  });
});
