/**
 * The controller at the machine: device tokens (rotate, revoke → 401), badges (enrol, unknown list, assign),
 * authorise with every deny reason, allow = check-in through the phone's check-in path, walk-ups, heartbeats with
 * measured beam seconds priced at release, the state long-poll cut by a stop fault filed through the phone page's
 * API, the offline e-mail, the OpenAPI document, and the simulator run against the app.
 *
 * Everything happens on this file's own machine, with its own people, clearances and bookings. Bookings that start
 * in the past cannot be made through the API, so they are written directly (as in machine-sessions.test.ts), and so
 * is a current clearance (as clearedNew does).
 */
import { execFile } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { promisify } from 'node:util';
import SwaggerParser from '@apidevtools/swagger-parser';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { createPerson } from '../../src/lib/server/people';
import { makeBooking, makeClearance } from '../../seeds/lib/factories';
import { sweepControllers } from '../../src/lib/server/controllers/offline-alert';
import { CONTROLLER_PATHS } from '../../src/lib/controller-openapi';
import { DENY_REASONS } from '../../src/lib/controller-rules';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { APP_URL } from '../support/env';
import { waitForMail } from '../support/mail';

const MIN = 60_000;
const ALL_DAY = [1, 2, 3, 4, 5, 6, 7].map((weekday) => ({ weekday, opensMinute: 0, closesMinute: 1440 }));
const RULES = { slotMinutes: 15, minMinutes: 15, maxMinutes: 240, bufferMinutes: 0, leadMinutes: 0, horizonDays: 35, cancelCutoffMinutes: 120, quotas: { student: null, staff: null, community: null, commercial: null } };

let admin: Client;
let steward: Client;
let instructor: Client;
let machine: { id: string; code: string; name: string };
let groupId: string;
let token: string;
let controllerId: string;
const seen = new Set<string>();

interface TestPerson {
  id: string;
  email: string;
  password: string;
  badge: string;
  client: Client;
}

/** A person of this file with a badge enrolled by a steward through the API; `cleared` writes a current clearance. */
async function person(label: string, opts: { cleared?: boolean; card?: boolean } = {}): Promise<TestPerson> {
  const email = `ctrl-${label}-${randomUUID().slice(0, 8)}@test.example`;
  const password = 'a long test password for the controller';
  const p = await createPerson({ email, name: `Gate ${label}`, password, roles: ['member'] });
  if (opts.cleared !== false) {
    await makeClearance(testDb(), { personId: p.id, groupId, state: 'cleared', level: 'advanced' });
  }
  const badge = `04:${randomUUID().replace(/-/g, '').slice(0, 12).toUpperCase().match(/../g)!.join(':')}`;
  const enrol = await steward.send('POST', `/api/people/${p.id}/badges`, { badge });
  expect(enrol.status, await enrol.clone().text()).toBe(201);
  // signed in with the session a sign-in gives (signing in is sign-in.test.ts's subject): the person is in
  const client = await new Client().useSessionOf(email);
  expect((await client.get('/api/me')).status).toBe(200);
  if (opts.card) expect((await client.send('POST', '/api/account/card', { token: 'tok_visa' })).status).toBe(201);
  return { id: p.id, email, password, badge, client };
}

/** A booking on this file's machine written directly (it may start in the past). */
async function booking(personId: string, startOffsetMin: number, lengthMin: number): Promise<{ id: string; ends_at: Date }> {
  const startsAt = new Date(Math.floor(Date.now() / MIN) * MIN + startOffsetMin * MIN);
  const endsAt = new Date(startsAt.getTime() + lengthMin * MIN);
  const id = await makeBooking(testDb(), { machineId: machine.id, personId, startsAt, endsAt, bufferMinutes: 0 });
  return { id, ends_at: endsAt };
}

function device(method: string, path: string, json?: unknown, t = token): Promise<Response> {
  return fetch(new URL(path, APP_URL()), {
    method,
    headers: { authorization: `Bearer ${t}`, ...(json === undefined ? {} : { 'content-type': 'application/json' }) },
    body: json === undefined ? undefined : JSON.stringify(json),
  });
}

async function authorize(badge: string): Promise<any> {
  const res = await device('POST', '/api/controller/authorize', { badge });
  expect(res.status).toBe(200);
  const b = await body(res);
  if (b.allow === false) seen.add(b.reason);
  return b;
}

async function setHours(hours: typeof ALL_DAY): Promise<void> {
  const res = await admin.send('PUT', `/api/machines/${machine.id}/rules`, { ...RULES, hours });
  expect(res.status, await res.clone().text()).toBe(200);
}

async function backInService(): Promise<void> {
  // a machine with an open stop fault returns to service only once the fault is resolved
  const open = await testDb()('faults').where({ machine_id: machine.id }).whereNull('resolved_at').pluck('id');
  for (const id of open) {
    const r = await steward.send('POST', `/api/faults/${id}/resolve`, { resolution: 'Controller test: cause found and fixed' });
    expect(r.status, await r.clone().text()).toBe(200);
  }
  const res = await steward.send('POST', `/api/machines/${machine.id}/status`, {
    status: 'in service', reason: 'Controller test: fixed and tested',
    checklist: { causeFixed: true, interlocksTested: true, coolingAndExtraction: true, testFire: true },
  });
  expect(res.status, await res.clone().text()).toBe(200);
}

beforeAll(async () => {
  [admin, steward, instructor] = await Promise.all([Client.as('admin'), Client.as('steward'), Client.as('instructor')]);
  groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const code = `t-gate-${Date.now().toString(36)}`;
  const res = await admin.send('POST', '/api/machines', {
    code, name: `Gate test laser ${code.slice(-5)}`, groupId, requiredLevel: 'basic', powerW: 40, tubeType: 'rf_metal', wavelengthUm: 10.6,
    bedWidthMm: 600, bedDepthMm: 400, beamDiameterMm: 4, divergenceMrad: 2, lensFocalMm: 50.8, coolantType: 'air', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  machine = { id: m.id, code, name: m.name };
  await setHours(ALL_DAY);
  // rates for this machine in every price version: publishing a new version through the API would reprice every
  // machine for every other test file, so the rows are added directly
  const versions = (await testDb()('price_versions').select('id')) as { id: string }[];
  for (const v of versions) {
    await testDb()('price_rates')
      .insert(['student', 'staff', 'community', 'commercial'].map((tier) => ({ version_id: v.id, machine_id: machine.id, tier, per_minute_minor: 150 })))
      .onConflict(['version_id', 'machine_id', 'tier']).ignore();
  }
  const reg = await admin.send('POST', '/api/controllers', { machineId: machine.id, name: 'Gate box 1' });
  expect(reg.status).toBe(201);
  ({ id: controllerId, token } = await body(reg));
  expect(token).toMatch(/^bwc_/);
});

afterEach(async () => {
  // no test leaves a session open on this file's machine, or walk-ups switched on
  await testDb()('machine_sessions').where({ machine_id: machine.id }).whereNull('checked_out_at')
    .update({ checked_out_at: testDb().raw('greatest(now(), checked_in_at)'), beam_minutes: 0 });
  await testDb()('bookings').where({ machine_id: machine.id }).whereIn('state', ['reserved', 'checked in']).update({ state: 'cancelled' });
  await admin.send('PUT', '/api/controllers/walk-ups', { mode: 'bookings_only' });
});

afterAll(async () => {
  if (machine) await admin.send('POST', `/api/machines/${machine.id}/retire`, { reason: 'Controller test machine, no longer needed.' });
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

describe('registration and tokens', () => {
  it('the token is stored hashed, shown once; the list never carries it; rotate and revoke turn the old token into 401', async () => {
    const row = await testDb()('controllers').where({ id: controllerId }).first();
    expect(row.token_hash).not.toContain(token);
    expect(row.token_hash).toMatch(/^[0-9a-f]{64}$/);
    const list = await body(await admin.get('/api/controllers'));
    expect(JSON.stringify(list)).not.toContain(token);
    expect(list.controllers.find((c: any) => c.id === controllerId)).toMatchObject({ machineName: machine.name, name: 'Gate box 1' });

    expect((await fetch(new URL('/api/controller/state', APP_URL()))).status).toBe(401);
    expect((await device('GET', '/api/controller/state', undefined, 'bwc_wrong')).status).toBe(401);

    const spare = await body(await admin.send('POST', '/api/controllers', { machineId: machine.id, name: 'Spare box' }));
    expect((await device('POST', '/api/controller/heartbeat', { firmware: 'gate 0.9' }, spare.token)).status).toBe(200);
    const rotated = await body(await admin.send('POST', `/api/controllers/${spare.id}/rotate`));
    expect(rotated.token).not.toBe(spare.token);
    expect((await device('GET', '/api/controller/state', undefined, spare.token)).status).toBe(401);
    expect((await device('GET', '/api/controller/state', undefined, rotated.token)).status).toBe(200);
    expect((await admin.send('POST', `/api/controllers/${spare.id}/revoke`)).status).toBe(200);
    const revoked = await device('POST', '/api/controller/authorize', { badge: '04AABBCCDD' }, rotated.token);
    expect(revoked.status).toBe(401);
    expect((await body(revoked)).error.code).toBe('invalid_token');
    const after = (await body(await admin.get('/api/controllers'))).controllers.find((c: any) => c.id === spare.id);
    expect(after).toMatchObject({ firmware: 'gate 0.9' });
    expect(after.revokedAt).not.toBeNull();
    expect((await steward.send('POST', '/api/controllers', { machineId: machine.id, name: 'x' })).status).toBe(403);
  });
});

describe('authorise', () => {
  it('unknown badge: denied, listed for an hour with its last four characters only, and assignable by a steward', async () => {
    const raw = `04:${randomUUID().slice(0, 8)}`.toUpperCase();
    const d = await authorize(raw);
    expect(d).toMatchObject({ allow: false, reason: 'unknown_badge' });
    expect(d.message.length).toBeLessThanOrEqual(32);
    const list = await body(await steward.get('/api/badges/unknown'));
    const hint = raw.replace(/[:-]/g, '').slice(-4);
    const mine = list.find((u: any) => u.lastFour === hint && u.machineName === machine.name);
    expect(mine).toBeTruthy();
    expect(JSON.stringify(list)).not.toContain(raw.replace(/:/g, ''));
    const p = await person('assign', { cleared: false });
    const assigned = await steward.send('POST', `/api/badges/unknown/${mine.id}/assign`, { personId: p.id });
    expect(assigned.status).toBe(201);
    expect((await body(await steward.get('/api/badges/unknown'))).find((u: any) => u.id === mine.id)).toBeUndefined();
    // now known: the person holds no clearance
    expect(await authorize(raw.toLowerCase())).toMatchObject({ allow: false, reason: 'not_cleared' });
    const stored = await testDb()('badges').where({ person_id: p.id });
    expect(stored.map((b: any) => b.last_four)).toContain(hint);
    for (const b of stored) expect(JSON.stringify(b)).not.toContain(raw.replace(/:/g, ''));
    // the same badge cannot be enrolled twice
    expect((await steward.send('POST', `/api/people/${p.id}/badges`, { badge: raw })).status).toBe(409);
    // every decision is audited
    const audits = await testDb()('audit_log').where({ subject_id: controllerId, kind: 'controller.denied' }).count<{ count: number }[]>('* as count');
    expect(Number(audits[0]!.count)).toBeGreaterThanOrEqual(2);
  });

  it('inactive, not_cleared, suspended, no_booking, outside_hours and machine_out_of_service', async () => {
    const gone = await person('inactive');
    expect((await admin.send('POST', `/api/people/${gone.id}/deactivate`)).status).toBe(200);
    expect(await authorize(gone.badge)).toMatchObject({ allow: false, reason: 'inactive' });

    const uncleared = await person('uncleared', { cleared: false });
    const theirs = await booking(uncleared.id, -5, 60);
    expect(await authorize(uncleared.badge)).toMatchObject({ allow: false, reason: 'not_cleared' });
    await testDb()('bookings').where({ id: theirs.id }).update({ state: 'cancelled' });

    const susp = await person('suspended');
    const clearance = await testDb()('clearances').where({ person_id: susp.id }).first('id');
    expect((await instructor.send('POST', `/api/clearances/${clearance.id}/suspend`, { reason: 'Controller test suspension' })).status).toBe(200);
    expect(await authorize(susp.badge)).toMatchObject({ allow: false, reason: 'suspended' });

    const walker = await person('nobooking', { card: true });
    expect(await authorize(walker.badge)).toMatchObject({ allow: false, reason: 'no_booking' });
    // a booking that starts in 30 minutes: its check-in window is not open yet
    await booking(walker.id, 30, 30);
    expect(await authorize(walker.badge)).toMatchObject({ allow: false, reason: 'no_booking' });

    await setHours([]);
    try {
      expect(await authorize(walker.badge)).toMatchObject({ allow: false, reason: 'outside_hours' });
    } finally {
      await setHours(ALL_DAY);
    }

    const res = await steward.send('POST', `/api/machines/${machine.id}/status`, { status: 'out of service', reason: 'Controller test: mirror mount loose' });
    expect(res.status, await res.clone().text()).toBe(200);
    try {
      expect(await authorize(walker.badge)).toMatchObject({ allow: false, reason: 'machine_out_of_service' });
    } finally {
      await backInService();
    }
  });
});

describe('allow, heartbeats, release', () => {
  it('a booking in its window: allow checks the person in (by controller), the state is enabled, measured beam seconds price the session', async () => {
    const p = await person('booked', { card: true });
    const b = await booking(p.id, -5, 60);
    const a = await authorize(p.badge);
    expect(a).toMatchObject({ allow: true, personName: 'Gate booked', walkUp: false, until: new Date(b.ends_at).toISOString() });

    const booked = await testDb()('bookings').where({ id: b.id }).first('state');
    expect(booked.state).toBe('checked in');
    const s = await testDb()('machine_sessions').where({ id: a.sessionId }).first();
    expect(s).toMatchObject({ booking_id: b.id, person_id: p.id, controller_id: controllerId, walk_up: false });
    expect(Object.values(s.checklist).every((v) => v === true)).toBe(true);
    expect(await testDb()('audit_log').where({ subject_id: a.sessionId, kind: 'session.checked_in' }).first('id')).toBeTruthy();
    expect(await testDb()('audit_log').where({ subject_id: controllerId, kind: 'controller.allowed', actor_id: p.id }).first('id')).toBeTruthy();

    const st = await body(await device('GET', '/api/controller/state'));
    expect(st).toMatchObject({ state: 'enabled', sessionId: a.sessionId, until: new Date(b.ends_at).toISOString() });
    // badging again keeps the same session
    expect(await authorize(p.badge)).toMatchObject({ allow: true, sessionId: a.sessionId });

    expect((await device('POST', '/api/controller/heartbeat', { sessionId: a.sessionId, beamSeconds: 90, firmware: 'gate 1.0' })).status).toBe(200);
    expect((await device('POST', '/api/controller/heartbeat', { sessionId: a.sessionId, beamSeconds: 150 })).status).toBe(200);
    // the release reports less than a heartbeat did: the measured time never goes down
    const rel = await device('POST', '/api/controller/release', { sessionId: a.sessionId, beamSeconds: 100 });
    expect(rel.status).toBe(200);
    const closed = await body(rel);
    // 150 s measured → 3 minutes (a started minute counts); the wall clock would have said 0
    expect(closed.session).toMatchObject({ id: a.sessionId, beamMinutes: 3, measuredBeamSeconds: 150, beamSource: 'measured' });
    expect(closed.charge).toMatchObject({ minutes: 3 });
    expect(closed.charge.amountMinor).toBeGreaterThan(0);
    expect((await testDb()('bookings').where({ id: b.id }).first('state')).state).toBe('completed');
    expect((await body(await device('GET', '/api/controller/state'))).state).toBe('cut');
    // a repeated release answers the same closed session
    expect((await body(await device('POST', '/api/controller/release', { sessionId: a.sessionId, beamSeconds: 150 }))).charge.id).toBe(closed.charge.id);

    const receipt = await p.client.get(`/account/receipts/${closed.charge.id}`);
    expect(receipt.status).toBe(200);
    const html = await receipt.text();
    expect(html).toContain('data-beam-source="measured"');
    expect(html).toContain('Measured by the machine’s controller: 150 s');
  });

  it('walk-ups: off by default (no_booking); on, a free machine in opening hours starts a walk-up session until the next booking', async () => {
    const p = await person('walkup', { card: true });
    const other = await person('later', { card: true });
    const next = await booking(other.id, 45, 30);
    expect(await authorize(p.badge)).toMatchObject({ allow: false, reason: 'no_booking' });
    expect((await admin.send('PUT', '/api/controllers/walk-ups', { mode: 'walk_ups_allowed' })).status).toBe(200);
    const a = await authorize(p.badge);
    expect(a).toMatchObject({ allow: true, walkUp: true });
    expect(new Date(a.until).getTime()).toBeLessThanOrEqual(new Date(next.ends_at).getTime() - 30 * MIN);
    const s = await testDb()('machine_sessions as s').join('bookings as b', 'b.id', 's.booking_id').where('s.id', a.sessionId).first('s.walk_up', 'b.state', 'b.person_id');
    expect(s).toMatchObject({ walk_up: true, state: 'checked in', person_id: p.id });
    const closed = await body(await device('POST', '/api/controller/release', { sessionId: a.sessionId, beamSeconds: 0 }));
    expect(closed.session).toMatchObject({ beamMinutes: 0, beamSource: 'measured' });
  });
});

describe('commands to the box', () => {
  it('a stop fault filed from the phone page turns a waiting long-poll to cut within 5 s', async () => {
    const p = await person('stopper', { card: true });
    await booking(p.id, -2, 60);
    const a = await authorize(p.badge);
    expect(a.allow).toBe(true);
    expect((await body(await device('GET', '/api/controller/state'))).state).toBe('enabled');
    const started = Date.now();
    const poll = device('GET', '/api/controller/state?wait=25').then(async (r) => ({ at: Date.now(), status: r.status, body: await body(r) }));
    await new Promise((r) => setTimeout(r, 800));
    const form = new FormData();
    form.set('summary', 'Controller test: smoke from the tube');
    form.set('severity', 'stop');
    const fault = await p.client.fetch(`/api/machines/${machine.code}/faults`, { method: 'POST', body: form });
    // the fault is committed when its answer arrives (the report itself also bumps bookings and queues e-mails)
    const filedAt = Date.now();
    expect(fault.status, await fault.clone().text()).toBe(201);
    try {
      const answer = await poll;
      expect(answer.status).toBe(200);
      expect(answer.body).toMatchObject({ state: 'cut', reason: 'machine_out_of_service' });
      console.log(`stop fault: report answered ${filedAt - started - 800} ms after it was sent; the long-poll answered cut ${answer.at - filedAt} ms after the report's answer`);
      expect(answer.at - filedAt).toBeLessThan(5000);
      expect(answer.at - started).toBeGreaterThan(700); // it really waited for the change
    } finally {
      await backInService();
    }
  });

  it('a suspended clearance during a session cuts the waiting long-poll', async () => {
    const p = await person('suspend-live', { card: true });
    await booking(p.id, -2, 60);
    expect((await authorize(p.badge)).allow).toBe(true);
    expect((await body(await device('GET', '/api/controller/state'))).state).toBe('enabled');
    const poll = device('GET', '/api/controller/state?wait=25').then(async (r) => ({ at: Date.now(), body: await body(r) }));
    await new Promise((r) => setTimeout(r, 500));
    const clearance = await testDb()('clearances').where({ person_id: p.id }).first('id');
    const at = Date.now();
    expect((await instructor.send('POST', `/api/clearances/${clearance.id}/suspend`, { reason: 'Controller test: unsafe use seen' })).status).toBe(200);
    const answer = await poll;
    expect(answer.body).toMatchObject({ state: 'cut', reason: 'suspended' });
    expect(answer.at - at).toBeLessThan(5000);
  });

  it('a controller silent for 2 minutes while its machine is booked e-mails the stewards once', async () => {
    const p = await person('offline');
    await booking(p.id, -10, 60);
    await testDb()('controllers').where({ id: controllerId }).update({ last_seen_at: new Date(Date.now() - 3 * MIN), offline_alerted_at: null });
    const since = new Date();
    expect((await sweepControllers(new Date())).alerted).toBeGreaterThanOrEqual(1);
    const row = await testDb()('controllers').where({ id: controllerId }).first('offline_alerted_at');
    expect(row.offline_alerted_at).not.toBeNull();
    const mail = await waitForMail((m) => m.subject === `Controller offline: ${machine.name}` && m.to.some((t) => t.address === 'steward@tidewater.example'), { since });
    expect(mail.text).toContain('Gate box 1');
    // once: a second sweep does not alert this controller again
    await sweepControllers(new Date());
    expect((await testDb()('controllers').where({ id: controllerId }).first('offline_alerted_at')).offline_alerted_at).toEqual(row.offline_alerted_at);
    // seen again (any device call), it may be reported again later
    expect((await device('GET', '/api/controller/state')).status).toBe(200);
  });
});

/** A plain GET, tried again once when the connection itself failed (the shared test machine can be very busy). */
async function getOnce(path: string): Promise<Response> {
  try {
    return await fetch(new URL(path, APP_URL()));
  } catch {
    return fetch(new URL(path, APP_URL()));
  }
}

describe('OpenAPI document', () => {
  it('validates as OpenAPI 3.1 and lists every controller path', async () => {
    const res = await getOnce('/api/openapi.json');
    expect(res.status).toBe(200);
    const doc = await res.json();
    expect(doc.openapi).toMatch(/^3\.1\./);
    await SwaggerParser.validate(structuredClone(doc));
    for (const path of CONTROLLER_PATHS) expect(Object.keys(doc.paths)).toContain(path);
    expect(Object.keys(doc.paths)).toContain('/api/controllers');
    expect(Object.keys(doc.paths)).toContain('/api/people/{id}/badges');
    expect(doc.components.schemas.AuthorizeDeny.properties.reason.enum).toEqual([...DENY_REASONS]);
    const page = await getOnce('/controller-api');
    expect(page.status).toBe(200);
    const html = await page.text();
    for (const path of CONTROLLER_PATHS) expect(html).toContain(path);
  });
});

describe('the simulator against the running app', () => {
  const run = promisify(execFile);
  async function sim(args: string[]): Promise<{ code: number; out: string }> {
    try {
      const r = await run(process.execPath, ['--import', 'tsx', 'scripts/controller-sim.ts', '--url', APP_URL(), '--token', token, '--machine', machine.code, '--interval-ms', '200', ...args], { timeout: 60_000 });
      return { code: 0, out: r.stdout };
    } catch (err) {
      const e = err as { code?: number; stdout?: string; stderr?: string };
      return { code: e.code ?? 1, out: `${e.stdout ?? ''}${e.stderr ?? ''}` };
    }
  }

  it('an allowed badge: hello, beam seconds, checked out with measured time; an unknown badge: denied', async () => {
    const p = await person('sim', { card: true });
    await booking(p.id, -3, 60);
    const ok = await sim(['--badge', p.badge, '--beam-seconds', '95']);
    expect(ok.code, ok.out).toBe(0);
    expect(ok.out).toContain('Hello Gate sim');
    expect(ok.out).toContain('Beam 1:35');
    expect(ok.out).toContain('2 min measured');
    expect(ok.out).toContain('95 beam seconds measured');
    const s = await testDb()('machine_sessions').where({ person_id: p.id }).first('measured_beam_seconds', 'beam_minutes', 'checked_out_at');
    expect(s).toMatchObject({ measured_beam_seconds: 95, beam_minutes: 2 });
    expect(s.checked_out_at).not.toBeNull();

    const denied = await sim(['--badge', 'DEADBEEF01']);
    expect(denied.code, denied.out).toBe(2);
    expect(denied.out).toContain('DENIED (unknown_badge)');
    seen.add('unknown_badge');
  });

  it('every deny reason was answered in this file', () => {
    expect([...seen].sort()).toEqual([...DENY_REASONS].sort());
  });
});
