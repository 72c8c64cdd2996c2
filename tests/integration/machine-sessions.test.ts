/**
 * At the machine (issue 6, part A): QR labels decode to the machine page; check-in window and refusals;
 * check-out beam time and the charge made through chargeBeamTime against the payment fake; the sweep that
 * closes sessions left open; upkeep log, tube hours and roles.
 *
 * Bookings that start in the past cannot be made through the API, so they are written directly (as in
 * bookings.test.ts); everything else goes through the app.
 */
import { randomUUID } from 'node:crypto';
import jsQR from 'jsqr';
import { PNG } from 'pngjs';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, transaction } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { createPerson } from '../../src/lib/server/people';
import { recordQuizPass, signOff } from '../../src/lib/server/clearances/transitions';
import { sweepOpenSessions } from '../../src/lib/server/machine-sessions';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { expectError } from '../support/api-error';
import { waitUntil } from '../support/wait';

const MIN = 60_000;
const ALL_TICKED = { extractionOn: true, airAssistOn: true, coolantFlowing: true, lensClean: true, extinguisherInPlace: true, willStay: true };

let lasers: Record<string, string> = {};
let admin: Client;
let steward: Client;
let member: Client;
let memberId: string;
let instructorId: string;

/** A new member, cleared on both machine groups through the quiz and sign-off functions, with the test card saved. */
async function clearedPerson(label: string): Promise<{ id: string; email: string; client: Client }> {
  const email = `at-machine-${label}-${randomUUID().slice(0, 8)}@test.example`;
  const password = 'a long test password';
  const p = await createPerson({ email, name: `Pilot ${label}`, password, roles: ['member'] });
  const groups = (await testDb()('machine_groups').select('id', 'checklist')) as { id: string; checklist: string[] }[];
  for (const g of groups) {
    await transaction((trx) => recordQuizPass(trx, p.id, g.id, new Date()));
    await signOff(instructorId, { personId: p.id, groupId: g.id, checklist: g.checklist.map((item) => ({ item, done: true })), notes: 'test', level: 'advanced' });
  }
  const client = new Client();
  const r = await client.signInAs(email, password);
  if (r.location.includes('error')) throw new Error('sign-in failed');
  const card = await client.send('POST', '/api/account/card', { token: 'tok_visa' });
  expect(card.status).toBe(201);
  return { id: p.id, email, client };
}

/** A booking written directly (it may start in the past); overlapping active bookings on the machine are cancelled first. */
async function booking(personId: string, code: string, startOffsetMin: number, lengthMin: number, state = 'reserved'): Promise<{ id: string; starts_at: Date; ends_at: Date }> {
  const startsAt = new Date(Math.floor(Date.now() / MIN) * MIN + startOffsetMin * MIN);
  const endsAt = new Date(startsAt.getTime() + lengthMin * MIN);
  await testDb()('bookings')
    .where({ machine_id: lasers[code] })
    .whereIn('state', ['reserved', 'checked in'])
    .whereRaw("tstzrange(starts_at, occupied_until, '[)') && tstzrange(?, ?, '[)')", [startsAt, endsAt])
    .update({ state: 'cancelled' });
  const [b] = await testDb()('bookings')
    .insert({ machine_id: lasers[code], person_id: personId, starts_at: startsAt, ends_at: endsAt, occupied_until: endsAt, state })
    .returning(['id', 'starts_at', 'ends_at']);
  return b;
}

function decodePng(buf: Buffer): string | null {
  const img = PNG.sync.read(buf);
  return jsQR(new Uint8ClampedArray(img.data), img.width, img.height)?.data ?? null;
}

beforeAll(async () => {
  const rows = (await testDb()('machines').select('id', 'code')) as { id: string; code: string }[];
  lasers = Object.fromEntries(rows.map((r) => [r.code, r.id]));
  instructorId = (await testDb()('people').where({ email: 'instructor@tidewater.example' }).first('id')).id;
  memberId = (await testDb()('people').where({ email: 'member@tidewater.example' }).first('id')).id;
  [admin, steward, member] = await Promise.all([Client.as('admin'), Client.as('steward'), Client.as('member')]);
  await testDb()('machines').update({ status: 'in service' });
});

afterEach(async () => {
  // no test leaves a session open on a machine
  await testDb()('machine_sessions').whereNull('checked_out_at').update({ checked_out_at: testDb().raw('greatest(now(), checked_in_at)'), beam_minutes: 0 });
});

afterAll(async () => {
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

describe('QR labels', () => {
  it('the QR PNG, the label PNG and the label SVG encode <public base URL>/m/<code> (decoded with jsqr + pngjs)', async () => {
    const original = await body(await admin.get('/api/site'));
    const base = 'https://lasers.tidewater.example';
    const put = await admin.send('PUT', '/api/site', { ...original, publicBaseUrl: `${base}/`, updatedAt: undefined });
    expect(put.status).toBe(200);
    try {
      const qr = await member.get(`/api/machines/${lasers['laser-a']}/qr.png`);
      expect(qr.status).toBe(200);
      expect(qr.headers.get('content-type')).toBe('image/png');
      expect(decodePng(Buffer.from(await qr.arrayBuffer()))).toBe(`${base}/m/laser-a`);

      const label = await steward.get(`/api/machines/${lasers['laser-b']}/label.png`);
      expect(label.status).toBe(200);
      expect(decodePng(Buffer.from(await label.arrayBuffer()))).toBe(`${base}/m/laser-b`);

      const svg = await steward.get(`/api/machines/${lasers['laser-c']}/label.svg`);
      expect(svg.headers.get('content-type')).toMatch(/^image\/svg\+xml/);
      const text = await svg.text();
      expect(text).toContain('Laser C');
      expect(text).toContain('Never leave a running job');
      expect(text).toContain(`${base}/m/laser-c`);
      expect(text).not.toMatch(/<script/i);
    } finally {
      const { updatedAt: _u, ...rest } = original;
      expect((await admin.send('PUT', '/api/site', rest)).status).toBe(200);
    }
  });

  it('labels need a steward or admin; the QR needs sign-in; unknown machines are 404', async () => {
    await expectError(await member.get(`/api/machines/${lasers['laser-a']}/label.svg`), 403, 'forbidden');
    await expectError(await new Client().get(`/api/machines/${lasers['laser-a']}/qr.svg`), 401, 'sign_in_required');
    await expectError(await admin.get(`/api/machines/${randomUUID()}/label.png`), 404, 'not_found');
    const sheet = await admin.get('/admin/labels');
    expect(sheet.status).toBe(200);
    const html = await sheet.text();
    for (const code of ['laser-a', 'laser-b', 'laser-c']) expect(html).toContain(`data-machine="${code}"`);
    expect((await member.get('/admin/labels')).status).toBe(403);
  });
});

describe('the machine page', () => {
  it('signed out: the public part and a sign-in that comes back here; a form post → sign in; unknown code → 404', async () => {
    const res = await new Client().get('/m/laser-a');
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('data-status=');
    expect(html).toContain('data-today');
    expect(html).toContain('data-emergency');
    expect(html).toContain('href="/signin?callbackUrl=%2Fm%2Flaser-a"');
    expect(html).not.toContain('href="/m/laser-a/fault"');
    expect(html).not.toContain('name="booking"');
    const post = await new Client().fetch('/m/laser-a', { method: 'POST', body: new URLSearchParams({ do: 'check-in', booking: '00000000-0000-4000-8000-000000000000' }) });
    expect(post.status).toBe(303);
    expect(post.headers.get('location')).toBe('/signin?callbackUrl=%2Fm%2Flaser-a');
    expect((await member.get('/m/no-such-laser')).status).toBe(404);
  });

  it('signed out, the full hazard sheet opens from the machine page: figures, sources and cautions, nothing about people', async () => {
    const visitor = new Client();
    const page = await (await visitor.get('/m/laser-a')).text();
    expect(page).toContain(`href="/hazard/${lasers['laser-a']}"`);
    const res = await visitor.get(`/hazard/${lasers['laser-a']}`);
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('data-testid="eyewear"');
    expect(html).toContain('data-figure="class"');
    expect(html).toContain('ANSI Z136.1');
    expect(html).toContain('Cautions');
    // no one's name or address: the demo people's e-mails never appear, and the frame offers a sign-in
    expect(html).not.toMatch(/@tidewater\.example/);
    expect(html).toContain('href="/signin');
    // the recompute form (a GET) works signed out too; an unknown machine is the 404 page
    expect((await visitor.get(`/hazard/${lasers['laser-a']}?exposureS=0.25`)).status).toBe(200);
    expect((await visitor.get('/hazard/00000000-0000-4000-8000-000000000000')).status).toBe(404);
  });

  it('shows status, now and next, the hazard summary and the fault link', async () => {
    const html = await (await member.get('/m/laser-a')).text();
    expect(html).toContain('data-status="in service"');
    expect(html).toContain('data-now');
    expect(html).toContain(`href="/hazard/${lasers['laser-a']}"`);
    expect(html).toContain('href="/m/laser-a/fault"');
  });
});

describe('check-in', () => {
  it('refuses someone else\'s booking (403 not_your_booking), too early (409), ended (409), unknown (404)', async () => {
    const other = await booking(instructorId, 'laser-a', -5, 60);
    await expectError(await member.send('POST', `/api/bookings/${other.id}/check-in`, { checklist: ALL_TICKED, coolantC: 18 }), 403, 'not_your_booking');
    const later = await booking(memberId, 'laser-a', 90, 60);
    const early = await expectError(await member.send('POST', `/api/bookings/${later.id}/check-in`, { checklist: ALL_TICKED, coolantC: 18 }), 409, 'too_early');
    expect(early.message).toMatch(/10 minutes before/);
    const ended = await booking(memberId, 'laser-c', -12, 10);
    await expectError(await member.send('POST', `/api/bookings/${ended.id}/check-in`, { checklist: ALL_TICKED, coolantC: 18 }), 409, 'booking_ended');
    await expectError(await member.send('POST', `/api/bookings/${randomUUID()}/check-in`, { checklist: ALL_TICKED, coolantC: 18 }), 404, 'not_found');
    for (const b of [other, later, ended]) await testDb()('bookings').where({ id: b.id }).update({ state: 'cancelled' });
  });

  it('refuses a missing checklist item, a missing reading and coolant outside 15–25 °C (common practice for glass tubes), then accepts', async () => {
    const b = await booking(memberId, 'laser-a', 8, 60); // 8 minutes ahead: inside the 10-minute check-in window
    const path = `/api/bookings/${b.id}/check-in`;
    const incomplete = await expectError(await member.send('POST', path, { checklist: { ...ALL_TICKED, lensClean: false }, coolantC: 18 }), 422, 'checklist_incomplete');
    expect(incomplete.fields).toHaveProperty(['checklist.lensClean']);
    await expectError(await member.send('POST', path, { checklist: { extractionOn: true }, coolantC: 18 }), 422, 'checklist_incomplete');
    await expectError(await member.send('POST', path, { checklist: ALL_TICKED }), 422, 'checklist_incomplete');
    const hot = await expectError(await member.send('POST', path, { checklist: ALL_TICKED, coolantC: 27 }), 422, 'coolant_out_of_range');
    expect(hot.message).toMatch(/27 °C is above 25 °C/);
    await expectError(await member.send('POST', path, { checklist: ALL_TICKED, coolantC: 12.5 }), 422, 'coolant_out_of_range');
    expect((await testDb()('machine_sessions').where({ booking_id: b.id })).length).toBe(0);

    const ok = await member.send('POST', path, { checklist: ALL_TICKED, coolantC: 18.5 });
    expect(ok.status).toBe(200);
    const session = await body(ok);
    expect(session).toMatchObject({ bookingId: b.id, personId: memberId, coolantC: 18.5, checkedOutAt: null, checklist: ALL_TICKED });
    const row = await testDb()('bookings').where({ id: b.id }).first();
    expect(row.state).toBe('checked in');
    expect(row.checked_in_at).toBeInstanceOf(Date);
    expect(await testDb()('audit_log').where({ subject_id: session.id, kind: 'session.checked_in' }).first()).toBeTruthy();
    await expectError(await member.send('POST', path, { checklist: ALL_TICKED, coolantC: 18.5 }), 409, 'already_checked_in');
    await testDb()('bookings').where({ id: b.id }).update({ state: 'cancelled' });
  });

  it('air-cooled RF tube: no chiller reading; a machine out of service refuses (409); no clearance refuses (403)', async () => {
    const rf = await booking(memberId, 'laser-b', -3, 60);
    await testDb()('machines').where({ id: lasers['laser-b'] }).update({ status: 'out of service' });
    try {
      await expectError(await member.send('POST', `/api/bookings/${rf.id}/check-in`, { checklist: ALL_TICKED }), 409, 'machine_out_of_service');
    } finally {
      await testDb()('machines').where({ id: lasers['laser-b'] }).update({ status: 'in service' });
    }
    const res = await member.send('POST', `/api/bookings/${rf.id}/check-in`, { checklist: ALL_TICKED });
    expect(res.status).toBe(200);
    expect((await body(res)).coolantC).toBeNull();
    await testDb()('bookings').where({ id: rf.id }).update({ state: 'cancelled' });

    const newbieId = (await testDb()('people').where({ email: 'newbie@tidewater.example' }).first('id')).id;
    const nb = await booking(newbieId, 'laser-c', -2, 30);
    const newbie = await Client.as('newbie');
    await expectError(await newbie.send('POST', `/api/bookings/${nb.id}/check-in`, { checklist: ALL_TICKED, coolantC: 18 }), 403, 'clearance_required');
    await testDb()('bookings').where({ id: nb.id }).update({ state: 'cancelled' });
  });
});

describe('check-out and the charge', () => {
  it('records beam minutes, the job timer and the sheets used; the booking is completed; the saved card is charged once', async () => {
    const pilot = await clearedPerson('checkout');
    const b = await booking(pilot.id, 'laser-c', -5, 60);
    // out of order: check-out before check-in
    await expectError(await pilot.client.send('POST', `/api/bookings/${b.id}/check-out`, { materials: [], leftCleanAndClear: true }), 409, 'not_checked_in');
    const s = await body(await pilot.client.send('POST', `/api/bookings/${b.id}/check-in`, { checklist: ALL_TICKED, coolantC: 19 }));
    // 42 minutes of beam time: the check-in is moved back (a test cannot wait 42 minutes)
    await testDb()('machine_sessions').where({ id: s.id }).update({ checked_in_at: new Date(Date.now() - 42 * MIN - 5_000) });

    await expectError(await member.send('POST', `/api/bookings/${b.id}/check-out`, { materials: [], leftCleanAndClear: true }), 403, 'not_your_booking');
    await expectError(await pilot.client.send('POST', `/api/bookings/${b.id}/check-out`, { materials: [] }), 422, 'checklist_incomplete');
    await expectError(await pilot.client.send('POST', `/api/bookings/${b.id}/check-out`, { materials: [{ sku: 'gold-leaf', quantity: 1 }], leftCleanAndClear: true }), 422, 'unknown_material');

    const res = await pilot.client.send('POST', `/api/bookings/${b.id}/check-out`, { jobTimerMinutes: 38, materials: [{ sku: 'ply-3', quantity: 2 }, { sku: 'mdf-3', quantity: 0 }], leftCleanAndClear: true });
    expect(res.status).toBe(200);
    const out = await body(res);
    expect(out.session).toMatchObject({ id: s.id, beamMinutes: 42, jobTimerMinutes: 38 });
    expect(out.chargeProblem).toBeNull();
    expect((await testDb()('bookings').where({ id: b.id }).first()).state).toBe('completed');
    const row = await testDb()('machine_sessions').where({ id: s.id }).first();
    expect(row.checkout).toMatchObject({ leftCleanAndClear: true, materials: [{ sku: 'ply-3', quantity: 2 }] });

    // seeds/07_pricing.ts: laser-c community 60 c/min, per started 5 min (42 → 45 min), ply-3 NZD 6.50 a sheet, tax inclusive
    expect(out.charge).toMatchObject({ sessionId: s.id, bookingId: b.id, personId: pilot.id, kind: 'beam_time', minutes: 42, method: 'card', state: 'captured' });
    const lines = out.charge.breakdown.lines as { kind: string; quantity: number; amountMinor: number }[];
    expect(lines.find((l) => l.kind === 'beam_time')).toMatchObject({ quantity: 45, amountMinor: 2700 });
    expect(lines.find((l) => l.kind === 'material')).toMatchObject({ quantity: 2, amountMinor: 1300 });
    expect(out.charge.amountMinor).toBe(4000);
    const charges = await testDb()('charges').where({ session_id: s.id });
    expect(charges).toHaveLength(1);
    expect(await testDb()('audit_log').where({ subject_id: s.id, kind: 'session.checked_out' }).first()).toBeTruthy();
    // checking out again finds no open session
    await expectError(await pilot.client.send('POST', `/api/bookings/${b.id}/check-out`, { materials: [], leftCleanAndClear: true }), 409, 'not_checked_in');
  });

  it('a session left open 30 minutes past its booking is closed by the sweep, charged to the booking end and flagged for a steward', async () => {
    const pilot = await clearedPerson('sweep');
    const b = await booking(pilot.id, 'laser-b', -100, 60, 'checked in'); // ended 40 minutes ago
    const [s] = await testDb()('machine_sessions')
      .insert({ booking_id: b.id, machine_id: lasers['laser-b'], person_id: pilot.id, checked_in_at: new Date(b.starts_at.getTime() + 3 * MIN), checklist: JSON.stringify(ALL_TICKED) })
      .returning('id');
    const fresh = await booking(memberId, 'laser-a', -5, 60, 'checked in'); // ends in 55 minutes: stays open
    const [open] = await testDb()('machine_sessions')
      .insert({ booking_id: fresh.id, machine_id: lasers['laser-a'], person_id: memberId, checked_in_at: new Date(Date.now() - 4 * MIN), checklist: JSON.stringify(ALL_TICKED) })
      .returning('id');

    await sweepOpenSessions(new Date());
    const row = await testDb()('machine_sessions').where({ id: s.id }).first();
    expect(row).toMatchObject({ closed_by_system: true, needs_steward: true, beam_minutes: 57 });
    expect(row.checked_out_at.getTime()).toBe(b.ends_at.getTime());
    expect((await testDb()('bookings').where({ id: b.id }).first()).state).toBe('completed');
    expect(await testDb()('audit_log').where({ subject_id: s.id, kind: 'session.auto_closed' }).first()).toBeTruthy();
    expect((await testDb()('machine_sessions').where({ id: open.id }).first()).checked_out_at).toBeNull();
    const charge = await waitUntil('the beam-time charge', () => testDb()('charges').where({ session_id: s.id }).first(), 10_000);
    expect(charge).toMatchObject({ minutes: 57, kind: 'beam_time' });

    // the steward sees it on Upkeep and marks it reviewed
    expect(await (await steward.get('/upkeep')).text()).toContain('Sessions closed by the system');
    await expectError(await member.send('POST', `/api/sessions/${s.id}/review`, { note: 'x' }), 403, 'forbidden');
    const reviewed = await steward.send('POST', `/api/sessions/${s.id}/review`, { note: 'Member forgot to check out; machine was clean.' });
    expect(reviewed.status).toBe(200);
    expect((await body(reviewed)).needsSteward).toBe(false);
    await testDb()('bookings').where({ id: fresh.id }).update({ state: 'cancelled' });
  });
});

describe('upkeep', () => {
  it('stewards log upkeep (audited); a tube replacement restarts tube hours, summed from sessions; members may not', async () => {
    const m = lasers['laser-b'];
    await expectError(await member.send('POST', `/api/machines/${m}/upkeep`, { kind: 'lens_clean', notes: '' }), 403, 'forbidden');
    await expectError(await steward.send('POST', `/api/machines/${m}/upkeep`, { kind: 'tube_replacement', notes: 'no rating' }), 422, 'invalid');
    await expectError(await steward.send('POST', `/api/machines/${m}/upkeep`, { kind: 'sharpen_blade', notes: '' }), 422, 'invalid');

    const fitted = new Date(Date.now() - 3 * 3600_000);
    const res = await steward.send('POST', `/api/machines/${m}/upkeep`, { kind: 'tube_replacement', performedAt: fitted.toISOString(), notes: 'New RF tube', tubeModel: '40 W RF metal tube', tubeRatedHours: 25000 });
    expect(res.status).toBe(201);
    const entry = await body(res);
    expect(entry).toMatchObject({ kind: 'tube_replacement', tubeRatedHours: 25000, performedByName: expect.any(String) });
    expect(await testDb()('audit_log').where({ kind: 'upkeep.logged', subject_id: m }).orderBy('at', 'desc').first()).toMatchObject({ summary: expect.stringContaining('Tube replacement') });

    // tube time since the new tube: the sessions that started after it was fitted, each counted by its job-timer
    // reading when one was given, else check-in to check-out
    const since = () => testDb()('machine_sessions').where({ machine_id: m }).whereNotNull('checked_out_at').where('checked_in_at', '>=', fitted);
    const rows = (await since().select('beam_minutes', 'job_timer_minutes')) as { beam_minutes: number; job_timer_minutes: number | null }[];
    const minutes = rows.reduce((a, r) => a + (r.job_timer_minutes ?? r.beam_minutes), 0);
    expect(minutes).toBeGreaterThan(0); // the auto-closed session above (57 min) started 97 minutes ago
    const due = await body(await steward.get(`/api/machines/${m}/upkeep/due`));
    expect(due.tubeRatedHours).toBe(25000);
    expect(due.tubeHours).toBe(Math.round((minutes / 60) * 10) / 10);
    expect(due.tubeHoursBasis).toEqual({ timerSessions: rows.filter((r) => r.job_timer_minutes !== null).length, clockSessions: rows.filter((r) => r.job_timer_minutes === null).length });
    // a job-timer reading, once given, is what counts: 57 clock minutes with a 20-minute timer reading → 20 minutes
    const auto = (await since().whereNull('job_timer_minutes').orderBy('checked_in_at').first('id', 'beam_minutes')) as { id: string; beam_minutes: number } | undefined;
    if (auto) {
      await testDb()('machine_sessions').where({ id: auto.id }).update({ job_timer_minutes: 20 });
      const after = await body(await steward.get(`/api/machines/${m}/upkeep/due`));
      expect(after.tubeHours).toBe(Math.round(((minutes - auto.beam_minutes + 20) / 60) * 10) / 10);
      expect(after.tubeHoursBasis.timerSessions).toBe(due.tubeHoursBasis.timerSessions + 1);
      const page = await (await steward.get('/upkeep')).text();
      expect(page).toMatch(/job-timer reading for \d+ session|job-timer reading of all \d+ sessions/);
    }
    const tube = due.due.find((d: { kind: string }) => d.kind === 'tube_replacement');
    expect(tube.interval.beamHours).toBe(25000);
    expect(tube.forecast.state).toBe('ok');
    expect(due.due.map((d: { kind: string }) => d.kind)).toContain('lens_clean');
  });

  it('an admin sets an interval per machine (audited); stewards may not; the forecast follows it', async () => {
    const m = lasers['laser-a'];
    await expectError(await steward.send('PUT', `/api/machines/${m}/upkeep/intervals`, { kind: 'lens_clean', beamHours: 4, days: 1 }), 403, 'forbidden');
    const before = await body(await steward.get(`/api/machines/${m}/upkeep/intervals`));
    expect(before.lens_clean).toMatchObject({ beamHours: 8, days: 7, custom: false });
    const res = await admin.send('PUT', `/api/machines/${m}/upkeep/intervals`, { kind: 'lens_clean', beamHours: 4, days: 1 });
    expect(res.status).toBe(200);
    expect(await testDb()('audit_log').where({ kind: 'upkeep.interval_changed', subject_id: m }).first()).toBeTruthy();
    const due = await body(await steward.get(`/api/machines/${m}/upkeep/due`));
    const lens = due.due.find((d: { kind: string }) => d.kind === 'lens_clean');
    expect(lens.interval).toMatchObject({ beamHours: 4, days: 1, custom: true });
    // the demo lens clean was 3 days ago: with a 1-day interval it is overdue
    expect(lens.forecast.state).toBe('overdue');
    expect(await (await member.get('/m/laser-a')).text()).toContain('data-upkeep-overdue');
    await admin.send('PUT', `/api/machines/${m}/upkeep/intervals`, { kind: 'lens_clean', beamHours: 8, days: 7 });
  });

  it('the Upkeep screen is for stewards and admins', async () => {
    expect((await member.get('/upkeep')).status).toBe(403);
    const html = await (await admin.get('/upkeep')).text();
    expect(html).toContain('data-tube-hours');
  });
});
