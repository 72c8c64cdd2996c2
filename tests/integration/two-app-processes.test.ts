/**
 * Two app processes on one PostgreSQL, as a site behind a proxy runs them: a second app is started here on
 * another port (startApp from tests/support/processes.ts: the same built entry and environment as the first).
 * Sessions, the sign-in throttle and the no-double-booking rule hold across both, since none of them lives
 * in process memory. The site settings do live in each process's memory: a change saved through one process, or
 * written straight into the table, is seen by the writer at once and by the other as soon as the notice arrives (NOTIFY site_settings; decision record 0420).
 * CHANGES SITE-WIDE SETTINGS for a moment (the site name; put back in a finally block): keep this file in the
 * serial set.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { stopServices, type Service } from '../../scripts/lib/stack';
import { iso, machines, setTestRules, siteTime } from '../support/booking';
import { Client } from '../support/client';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';
import { APP_URL, DEMO, DEMO_PASSWORD } from '../support/env';
import { startApp } from '../support/processes';
import { waitUntil } from '../support/wait';
import { expectError } from '../support/api-error';
import { createTestMachine, retireTestMachine } from '../support/machine';
import { newPerson } from '../support/people';
import { env } from '../../src/lib/server/env';

let secondUrl: string;
let second: Service | undefined;

beforeAll(async () => {
  const started = await startApp('app-2');
  second = started.service;
  secondUrl = started.url;
}, 60_000);

afterAll(async () => {
  // only this file's app: the serial files share one test process
  await stopServices(second ? [second] : []);
  await clearSignInLimits();
  await closeTestDb();
});

describe('two app processes on one database', () => {
  it('a session made by one process is honoured by the other', async () => {
    const one = new Client(); // signed in through the first process's form
    expect((await one.signInAs(DEMO.member, DEMO_PASSWORD)).location).not.toContain('error');
    const two = new Client(secondUrl);
    const res = await two.fetch('/api/me', { headers: { cookie: one.cookieHeader() } });
    expect(res.status).toBe(200);
    expect(((await res.json()) as { email: string }).email).toBe(DEMO.member);
  });

  it('the sign-in throttle counts failures made on either process', async () => {
    const victim = DEMO.student;
    // up to the pair's limit (SIGN_IN_PAIR_LIMIT: 5 by default, lower under npm test), alternating processes
    for (let i = 0; i < env().SIGN_IN_PAIR_LIMIT; i++) {
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

  it('a change to a machine\'s opening hours or closures, through either process or in the table, holds for the next booking on both at once', async () => {
    // booking rules live in each process's memory under a stamp that every booking reads with its lock (decision
    // record 0440): unlike the settings, nothing waits for a notice, so the very next request on either process obeys
    const admins = [await Client.as('admin'), await Client.as('admin', secondUrl)] as const;
    const machine = await createTestMachine(admins[0], 'two-proc-rules');
    try {
      // a week's quota that the six bookings below stay within
      const quotas = { student: 900, staff: 900, community: 900, commercial: 900 };
      await setTestRules(admins[0], machine.id, { quotas });
      const person = await newPerson('two-proc-rules', { clearedFor: [machine.code] });
      const members = [person.client, await new Client(secondUrl).useSessionOf(person.email)] as const;
      const book = (c: Client, day: number, hour: number) =>
        c.send('POST', '/api/bookings', { machineId: machine.id, startsAt: iso(siteTime(day, hour)), endsAt: iso(siteTime(day, hour + 1)), materials: [], notes: '' });
      // both processes have read (and keep) the 08:00–22:00 hours
      for (const [i, c] of members.entries()) expect((await book(c, 23 + i, 8)).status, `process ${i + 1} before the change`).toBe(201);

      // opening at noon from now on, saved through process 1: both refuse 09:00 at once
      await setTestRules(admins[0], machine.id, { quotas, hours: [1, 2, 3, 4, 5, 6, 7].map((weekday) => ({ weekday, opensMinute: 12 * 60, closesMinute: 22 * 60 })) });
      for (const [i, c] of members.entries()) await expectError(await book(c, 23 + i, 9), 422, 'outside_opening_hours');
      for (const [i, c] of members.entries()) expect((await book(c, 23 + i, 12)).status, `process ${i + 1} after the change`).toBe(201);

      // a closure added through process 2 holds on process 1 at once
      const closure = await admins[1].send('POST', `/api/machines/${machine.id}/closures`, { startsAt: iso(siteTime(25, 12)), endsAt: iso(siteTime(25, 18)), reason: 'Lens replacement' });
      expect(closure.status, await closure.clone().text()).toBe(201);
      for (const c of members) await expectError(await book(c, 25, 14), 422, 'outside_opening_hours');

      // a closure written straight into the table (a script, psql) holds as well
      await testDb()('closures').insert({ machine_id: machine.id, starts_at: siteTime(26, 12), ends_at: siteTime(26, 18), reason: 'Extraction service' });
      for (const c of members) await expectError(await book(c, 26, 15), 422, 'outside_opening_hours');
      expect((await book(members[1], 26, 19)).status).toBe(201);
    } finally {
      await retireTestMachine(admins[0], machine);
    }
  });

  it('a change to the site settings made through either process, or in the table, is seen by the writer at once and by the other process within its notice (2 s at most)', async () => {
    const admins = [await Client.as('admin'), await Client.as('admin', secondUrl)] as const;
    const nameOn = async (c: Client) => {
      const res = await c.get('/api/site');
      expect(res.status).toBe(200);
      return ((await res.json()) as { name: string }).name;
    };
    const original = (await admins[0].get('/api/site').then((r) => r.json())) as Record<string, unknown> & { name: string };
    const { updatedAt: _u, ...values } = original;
    try {
      // both processes have read (and keep) the settings before each change
      for (const [i, writer] of admins.entries()) {
        for (const c of admins) expect(await nameOn(c)).toBe(original.name);
        const name = `Two-process lab ${i}`;
        const res = await writer.send('PUT', '/api/site', { ...values, name });
        expect(res.status, await res.clone().text()).toBe(200);
        // the writer sees its own save at once; the other process as soon as PostgreSQL's notice reaches it — the
        // save waits (at most 1 s) for its own copy of that notice, which on a busy machine can still be a few
        // milliseconds ahead of the other process's (the cache is invalidated by notice, not checked per read)
        expect(await nameOn(writer), `the writer after its save through process ${i + 1}`).toBe(name);
        const other = admins[1 - i]!;
        await waitUntil(`the other process seeing the save through process ${i + 1}`, async () => (await nameOn(other)) === name, { timeoutMs: 2_000, intervalMs: 10 });
        const back = await writer.send('PUT', '/api/site', values);
        expect(back.status).toBe(200);
        expect(await nameOn(writer)).toBe(original.name);
        await waitUntil(`the other process seeing the name put back through process ${i + 1}`, async () => (await nameOn(other)) === original.name, { timeoutMs: 2_000, intervalMs: 10 });
      }
      // a write made outside the app (a script, psql) reaches both processes the same way, as soon as its notice
      // arrives (milliseconds; nobody waits for it here, unlike a save through the app)
      await testDb()('site_settings').where({ id: 1 }).update({ name: 'Two-process lab (table)' });
      for (const c of admins) await waitUntil('both processes seeing the new name', async () => (await nameOn(c)) === 'Two-process lab (table)', { timeoutMs: 2_000, intervalMs: 20 });
    } finally {
      await testDb()('site_settings').where({ id: 1 }).update({ name: original.name });
    }
    for (const c of admins) await waitUntil('both processes seeing the name put back', async () => (await nameOn(c)) === original.name, { timeoutMs: 2_000, intervalMs: 20 });
  });
});
