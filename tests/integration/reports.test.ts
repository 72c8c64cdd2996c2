/**
 * Reports against a known data set: a retired machine and a machine group of its own, with one site week
 * (Monday 2 March 2026 to Sunday 8 March) of hours, a closure, bookings, sessions, charges, quiz attempts,
 * sign-offs, faults and status changes written directly (no API writes sessions, faults or status changes
 * yet). Expected values are computed by hand below; totals over the whole charges table are checked against
 * an independent SUM. Everything written here is deleted afterwards.
 */
import { randomUUID } from 'node:crypto';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';
import { localToInstant } from '../../src/lib/availability';
import { REVENUE_STATES } from '../../src/lib/reports';
import { hashPassword } from '../../src/lib/server/passwords';
import { makePerson } from '../../seeds/lib/factories';

const suffix = randomUUID().slice(0, 8);
const machineId = randomUUID();
const groupId = randomUUID();
const quizId = randomUUID();
const versionId = randomUUID();
let tz = 'Pacific/Auckland';
let admin: Client;
const ids: Record<string, string> = {};
const WEEK = 'from=2026-03-02&to=2026-03-08';

/** Wall-clock time in the site's zone on a day of March 2026. */
const mar = (day: number, hour: number, minute = 0) => localToInstant(2026, 3, day, hour * 60 + minute, tz);
const feb = (day: number, hour: number) => localToInstant(2026, 2, day, hour * 60, tz);

beforeAll(async () => {
  const k = testDb();
  tz = (await k('site_settings').where({ id: 1 }).first('time_zone')).time_zone;
  // people of this file's own in the roles the data set needs (no row here belongs to a demo person)
  const passwordHash = await hashPassword('a long test passphrase for reports');
  for (const who of ['admin', 'member', 'student', 'newbie', 'steward', 'instructor'] as const) {
    const roles = who === 'admin' || who === 'steward' || who === 'instructor' ? [who] : (['member'] as const);
    ids[who] = await makePerson(k, { email: `rpt-${who}-${suffix}@test.example`, name: `Report ${who} ${suffix}`, passwordHash, roles });
  }
  await k('machine_groups').insert({ id: groupId, code: `rpt-${suffix}`, name: `Report test group ${suffix}` });
  await k('machines').insert({
    id: machineId, code: `rpt-${suffix}`, name: `Report test laser ${suffix}`, power_w: 60, tube_type: 'dc_glass', bed_width_mm: 600, bed_depth_mm: 400,
    coolant_type: 'water', group_id: groupId, retired_at: new Date(), // retired: invisible on the Floor and the Book screen
  });
  // Monday–Friday 09:00–17:00 = 5 × 480 = 2400 open minutes; a closure on Wednesday 09:00–13:00 takes 240 → 2160
  await k('opening_hours').insert([1, 2, 3, 4, 5].map((weekday) => ({ machine_id: machineId, weekday, opens_minute: 540, closes_minute: 1020 })));
  await k('closures').insert({ machine_id: machineId, starts_at: mar(4, 9), ends_at: mar(4, 13), reason: 'Report test closure' });

  const booking = (who: string, start: Date, minutes: number, state: string, late = false) => ({
    id: randomUUID(), machine_id: machineId, person_id: ids[who], kind: 'personal', state, starts_at: start,
    ends_at: new Date(start.getTime() + minutes * 60_000), occupied_until: new Date(start.getTime() + minutes * 60_000), late_cancel: late,
    cancelled_at: state === 'cancelled' ? start : null,
  });
  const mon = booking('member', mar(2, 10), 120, 'completed'); // booked 120
  const tue = booking('member', mar(3, 14), 90, 'no-show'); // booked 90 (the machine was held)
  const thu = booking('student', mar(5, 9), 60, 'cancelled', true); // not booked time; a late cancellation
  // booked 60 (completed: a past booking left `reserved` would be turned into a no-show by the worker's minute sweep)
  const fri = booking('student', mar(6, 16), 60, 'completed');
  await k('bookings').insert([mon, tue, thu, fri]);
  const [s1] = await k('machine_sessions').insert({ booking_id: mon.id, machine_id: machineId, person_id: ids.member, checked_in_at: mar(2, 10, 2), checked_out_at: mar(2, 11, 55), beam_minutes: 75 }).returning('id');
  await k('machine_sessions').insert({ machine_id: machineId, person_id: ids.student, checked_in_at: mar(6, 16), checked_out_at: mar(6, 16, 50), beam_minutes: 33 });

  const charge = (state: string, amount: number, extra: Record<string, unknown> = {}) => ({
    person_id: ids.member, tier: 'staff', machine_id: machineId, kind: 'beam_time', method: 'card', state, currency: 'NZD', amount_minor: amount,
    tax_minor: Math.round((amount * 15) / 115), breakdown: '{}', created_at: mar(3, 12), ...extra,
  });
  await k('charges').insert([
    charge('captured', 1000, { captured_minor: 1000, refunded_minor: 200, session_id: s1.id }), // net 800
    charge('recharged', 500, { method: 'recharge', cost_centre: 'RPT-1', person_id: ids.student, tier: 'student' }), // net 500
    charge('held', 700, { held_minor: 700 }), // not revenue yet
    charge('carried', 300), // owed, not yet paid
    charge('payment failed', 900), // owed, not paid
    charge('captured', 400, { captured_minor: 400, created_at: feb(20, 12) }), // outside the week
  ]);

  // the clearance funnel of the new group
  await k('quizzes').insert({ id: quizId, group_id: groupId, title: 'Report test quiz' });
  await k('quiz_versions').insert({ id: versionId, quiz_id: quizId, version: 1, status: 'draft', title: 'Report test quiz', pass_mark_pct: 80, questions_per_attempt: 1, questions: '[]' });
  const attempt = (who: string, start: Date, passed: boolean | null) => ({
    quiz_version_id: versionId, person_id: ids[who], group_id: groupId, drawn: '[]', started_at: start,
    submitted_at: passed === null ? null : new Date(start.getTime() + 600_000), passed,
  });
  await k('quiz_attempts').insert([
    attempt('member', mar(3, 10), false),
    attempt('member', mar(4, 10), true), // member: started, passed
    attempt('student', mar(5, 10), false), // student: started
    attempt('newbie', mar(2, 9), true), // newbie: started, passed, signed off below
    attempt('admin', feb(20, 10), true), // outside the week
    attempt('steward', mar(7, 10), null), // steward: started, not submitted
  ]);
  const [cl] = await k('clearances').insert({ person_id: ids.newbie, group_id: groupId, state: 'cleared', quiz_passed_at: mar(2, 9, 10), cleared_at: mar(6, 11), expires_at: localToInstant(2027, 3, 7, 0, tz), signed_off_by: ids.instructor }).returning('id');
  await k('signoffs').insert({ clearance_id: cl.id, person_id: ids.newbie, group_id: groupId, instructor_id: ids.instructor, level: 'basic', checklist: '[]', signed_at: mar(6, 11) });
  await k('clearances').insert({ person_id: ids.member, group_id: groupId, state: 'lapsed', quiz_passed_at: feb(1, 9), cleared_at: feb(1, 10), expires_at: mar(7, 0) }); // lapsed in the week
  await k('clearances').insert({ person_id: ids.student, group_id: groupId, state: 'quiz due' });

  // faults and status changes
  const fault = (severity: string, at: Date, status = 'resolved') => ({ machine_id: machineId, reported_by: ids.member, severity, summary: `Report test ${severity}`, status, created_at: at });
  await k('faults').insert([fault('stop', mar(3, 9, 55)), fault('degraded', mar(5, 8, 55)), fault('stop', mar(8, 19, 55)), fault('note', mar(7, 12), 'open'), fault('stop', feb(20, 10))]);
  const change = (from: string, to: string, at: Date) => ({ machine_id: machineId, from_status: from, to_status: to, changed_at: at, reason: 'report test' });
  await k('machine_status_changes').insert([
    change('in service', 'out of service', feb(20, 10)), // a spell before the week: 9 h, not in the week
    change('out of service', 'in service', feb(20, 19)),
    change('in service', 'out of service', mar(3, 10)), // 10:00 → 14:00 = 240 min, returned in the week
    change('out of service', 'in service', mar(3, 14)),
    change('in service', 'degraded', mar(5, 9)), // degraded is not out of service
    change('degraded', 'out of service', mar(5, 10)), // Thu 10:00 → Fri 10:00 = 1440 min, returned in the week
    change('out of service', 'in service', mar(6, 10)),
    change('in service', 'out of service', mar(8, 20)), // Sun 20:00 → Mon 02:00: 240 min inside the week, returned after it
    change('out of service', 'in service', mar(9, 2)),
  ]);
  admin = await Client.as('admin');
});

afterAll(async () => {
  const k = testDb();
  await k('machine_status_changes').where({ machine_id: machineId }).delete();
  await k('faults').where({ machine_id: machineId }).delete();
  await k('signoffs').where({ group_id: groupId }).delete();
  await k('clearances').where({ group_id: groupId }).delete();
  await k('quiz_attempts').where({ group_id: groupId }).delete();
  await k('quiz_versions').where({ id: versionId }).delete();
  await k('quizzes').where({ id: quizId }).delete();
  await k('charges').where({ machine_id: machineId }).delete();
  await k('machine_sessions').where({ machine_id: machineId }).delete();
  await k('bookings').where({ machine_id: machineId }).delete();
  await k('closures').where({ machine_id: machineId }).delete();
  await k('opening_hours').where({ machine_id: machineId }).delete();
  await k('machines').where({ id: machineId }).delete();
  await k('machine_groups').where({ id: groupId }).delete();
  await k('role_grants').whereIn('person_id', Object.values(ids)).delete();
  await k('people').whereIn('id', Object.values(ids)).delete();
  await clearSignInLimits();
  await closeTestDb();
});

async function report(name: string, query: string, who: Client = admin) {
  const res = await who.get(`/api/reports/${name}?${query}`);
  expect(res.status).toBe(200);
  return body(res);
}

describe('utilisation', () => {
  it('gives booked and beam time as a share of open hours minus closures for a known week', async () => {
    const r = await report('utilisation', `${WEEK}&machineId=${machineId}`);
    expect(r.rows).toHaveLength(1);
    const [row] = r.rows;
    expect(row.week_start).toBe('2026-03-02');
    // by hand: 5 × 8 h = 2400 min open, minus the 4 h closure = 2160
    expect(row.open_minutes).toBe(2160);
    // 120 (completed) + 90 (no-show) + 60 (completed); the cancelled booking does not count
    expect(row.booked_minutes).toBe(270);
    expect(row.booked_share).toBe(0.125); // 270 / 2160
    expect(row.beam_minutes).toBe(108); // 75 + 33
    expect(row.beam_share).toBe(0.05); // 108 / 2160
    expect(r.totals).toMatchObject({ openMinutes: 2160, bookedMinutes: 270, beamMinutes: 108 });
  });

  it('splits a period into site weeks, clipped to the period', async () => {
    const r = await report('utilisation', `from=2026-03-04&to=2026-03-10&machineId=${machineId}`);
    expect(r.rows.map((x: any) => x.week_start)).toEqual(['2026-03-04', '2026-03-09']);
    // Wed (480 − 240) + Thu + Fri = 1200; Mon + Tue of the next week = 960
    expect(r.rows.map((x: any) => x.open_minutes)).toEqual([1200, 960]);
    expect(r.rows[0].booked_minutes).toBe(60); // only Friday's booking falls from Wednesday on
  });

  it('splits bookings that cross a week boundary or the period\'s edges into the weeks they overlap', async () => {
    // April 2026, after the daylight-saving change: Wed 8 to Tue 21 April → weeks from 04-08 (Wed–Sun), 04-13, 04-20 (Mon–Tue)
    const apr = (day: number, hour: number, minute = 0) => localToInstant(2026, 4, day, hour * 60 + minute, tz);
    const row = (start: Date, end: Date, state = 'completed') => ({
      machine_id: machineId, person_id: ids.member, kind: 'personal', state, starts_at: start, ends_at: end, occupied_until: end,
      cancelled_at: state === 'cancelled' ? start : null,
    });
    await testDb()('bookings').insert([
      row(apr(7, 22), apr(8, 2)), // runs into the period's start: 120 in the first week
      row(apr(12, 23), apr(13, 1, 30)), // Sunday into Monday: 60 + 90
      row(apr(12, 22), apr(13, 0, 30)), // the same weeks: 120 + 30
      row(apr(11, 12), apr(20, 6)), // Saturday noon to a week Monday 06:00: 36 h + 7 days + 6 h
      row(apr(15, 10), apr(15, 11)), // inside the middle week: 60
      row(apr(21, 23), apr(22, 1)), // runs past the period's end: 60 in the last week
      row(apr(7, 10), apr(7, 11)), // before the period: not counted
      row(apr(16, 10), apr(16, 11), 'cancelled'), // cancelled: not counted
    ]);
    const r = await report('utilisation', `from=2026-04-08&to=2026-04-21&machineId=${machineId}`);
    expect(r.rows.map((x: any) => x.week_start)).toEqual(['2026-04-08', '2026-04-13', '2026-04-20']);
    // by hand: 120 + 60 + 120 + 2160 (Sat 12:00 → Mon 00:00); 90 + 30 + 10 080 (a whole week) + 60; 360 + 60
    expect(r.rows.map((x: any) => x.booked_minutes)).toEqual([2460, 10_260, 420]);
    expect(r.totals.bookedMinutes).toBe(2460 + 10_260 + 420);
  });
});

describe('revenue and recharge', () => {
  it('counts captured, refunded, recharged and settled charges; net is after refunds (hand-computed)', async () => {
    const r = await report('revenue', `${WEEK}&machineId=${machineId}`);
    // captured 1000 − 200 refunded = 800 (card) + recharged 500; held, carried, failed and February left out
    expect(r.totals).toMatchObject({ charges: 2, grossMinor: 1500, refundedMinor: 200, netMinor: 1300, cardNetMinor: 800, rechargeNetMinor: 500 });
    expect(r.rows.map((x: any) => [x.month, x.method, x.tier, x.net_minor])).toEqual(
      expect.arrayContaining([['2026-03', 'card', 'staff', 800], ['2026-03', 'recharge', 'student', 500]]),
    );
  });

  it('groups by the tier a charge was priced at, not the tier the person holds today', async () => {
    const before = (await testDb()('people').where({ id: ids.member }).first('tier')).tier as string;
    await testDb()('people').where({ id: ids.member }).update({ tier: 'commercial' }); // (the People screen's change, without its audit)
    try {
      const r = await report('revenue', `${WEEK}&machineId=${machineId}`);
      expect(r.rows.filter((x: any) => x.method === 'card').map((x: any) => x.tier)).toEqual(['staff']);
    } finally {
      await testDb()('people').where({ id: ids.member }).update({ tier: before });
    }
  });

  it('the total over every machine equals a direct SUM over the charges table for the same period', async () => {
    const res = await admin.get('/api/reports/revenue?from=2026-01-01&to=2026-12-31');
    const r = await body(res);
    const start = localToInstant(2026, 1, 1, 0, tz);
    const end = localToInstant(2027, 1, 1, 0, tz);
    const direct = await testDb()('charges')
      .whereIn('state', [...REVENUE_STATES])
      .where('created_at', '>=', start)
      .where('created_at', '<', end)
      .first(testDb().raw('coalesce(sum(amount_minor), 0)::bigint AS gross'), testDb().raw('coalesce(sum(amount_minor - refunded_minor), 0)::bigint AS net'), testDb().raw('count(*)::int AS n'));
    expect(r.totals.netMinor).toBe(Number(direct.net));
    expect(r.totals.grossMinor).toBe(Number(direct.gross));
    expect(r.totals.charges).toBe(direct.n);
    expect(r.totals.charges).toBeGreaterThan(2); // the seeded history and this file's charges are both in it
    expect(r.rows.reduce((s: number, x: any) => s + x.net_minor, 0)).toBe(r.totals.netMinor);
  });
});

describe('clearance funnel', () => {
  it('counts people per step in the period for the group of the chosen machine', async () => {
    const r = await report('clearances', `${WEEK}&machineId=${machineId}`);
    expect(r.rows).toEqual([
      // started: member, student, newbie, steward; passed: member, newbie; signed off: newbie; lapsed: member's
      { group_id: groupId, group: `Report test group ${suffix}`, quiz_started: 4, quiz_passed: 2, seats_booked: 0, attended: 0, signed_off: 1, lapsed: 1 },
    ]);
  });
});

describe('faults', () => {
  it('counts faults by severity, time out of service and the mean time to return (hand-computed)', async () => {
    const r = await report('faults', `${WEEK}&machineId=${machineId}`);
    expect(r.rows).toHaveLength(1);
    expect(r.rows[0]).toMatchObject({
      stop: 2, // 3 and 8 March (20 February is outside)
      degraded: 1,
      note: 1,
      open_now: 1,
      out_of_service_minutes: 1920, // 240 + 1440 + the 240 of the last spell that fall before Monday 00:00
      returns_to_service: 2,
      mean_minutes_to_return: 840, // (240 + 1440) / 2
    });
  });
});

describe('no-shows and late cancellations', () => {
  it('lists people with a no-show or a late cancellation, with their bookings in the period', async () => {
    const r = await report('no-shows', `${WEEK}&machineId=${machineId}`);
    const byPerson = Object.fromEntries(r.rows.map((x: any) => [x.person_id, x]));
    expect(byPerson[ids.member!]).toMatchObject({ bookings: 2, no_shows: 1, late_cancellations: 0, no_show_share: 0.5 });
    expect(byPerson[ids.student!]).toMatchObject({ bookings: 2, no_shows: 0, late_cancellations: 1 });
    expect(r.rows).toHaveLength(2);
  });
});

describe('CSV exports', () => {
  for (const name of ['utilisation', 'revenue', 'clearances', 'faults', 'no-shows']) {
    it(`${name}.csv parses to exactly the JSON rows`, async () => {
      const query = `${WEEK}&machineId=${machineId}`;
      const json = await report(name, query);
      const res = await admin.get(`/api/reports/${name}.csv?${query}`);
      expect(res.status).toBe(200);
      expect(res.headers.get('content-type')).toContain('text/csv');
      expect(res.headers.get('content-disposition')).toContain(`beamwarden-${name}-2026-03-02-to-2026-03-08.csv`);
      // a byte-order mark, so spreadsheets read UTF-8 (read as bytes: fetch's text() drops it while decoding)
      const bytes = Buffer.from(await res.arrayBuffer());
      expect([...bytes.subarray(0, 3)]).toEqual([0xef, 0xbb, 0xbf]);
      const text = bytes.toString('utf8').replace(/^\uFEFF/, '');
      expect(text).toContain('\r\n');
      const parsed = Papa.parse<Record<string, string>>(text.trim(), { header: true });
      expect(parsed.errors).toEqual([]);
      expect(json.rows.length).toBeGreaterThan(0);
      // money columns come in major units with the currency in the heading (and no separate currency column)
      const asCsv = (row: Record<string, unknown>) => Object.fromEntries(Object.entries(row).flatMap(([k, v]): [string, string][] => {
        if (k === 'currency') return [];
        if (k.endsWith('_minor')) return [[`${k.slice(0, -6)} (NZD)`, (Number(v) / 100).toFixed(2)]];
        return [[k, v === null ? '' : String(v)]];
      }));
      expect(parsed.data).toEqual(json.rows.map(asCsv));
    });
  }

  it('keeps a name that looks like a formula as text', async () => {
    await testDb()('machine_groups').where({ id: groupId }).update({ name: `=HYPERLINK("x") ${suffix}` });
    try {
      const text = await (await admin.get(`/api/reports/clearances.csv?${WEEK}&machineId=${machineId}`)).text();
      expect(text).toContain(`'=HYPERLINK`);
    } finally {
      await testDb()('machine_groups').where({ id: groupId }).update({ name: `Report test group ${suffix}` });
    }
  });
});

describe('roles and input', () => {
  const all = ['utilisation', 'revenue', 'clearances', 'faults', 'no-shows'];
  it('a member may read none; signed out is 401', async () => {
    const member = await Client.as('member');
    for (const name of all) {
      expect((await member.get(`/api/reports/${name}?${WEEK}`)).status).toBe(403);
      expect((await member.get(`/api/reports/${name}.csv?${WEEK}`)).status).toBe(403);
    }
    expect((await new Client().get(`/api/reports/revenue?${WEEK}`)).status).toBe(401);
    const page = await member.get('/reports');
    expect(page.status).toBe(403);
  });

  it('an instructor reads the clearance funnel only', async () => {
    const instructor = await Client.as('instructor');
    expect((await instructor.get(`/api/reports/clearances?${WEEK}`)).status).toBe(200);
    expect((await instructor.get(`/api/reports/clearances.csv?${WEEK}`)).status).toBe(200);
    for (const name of all.filter((n) => n !== 'clearances')) {
      expect((await instructor.get(`/api/reports/${name}?${WEEK}`)).status).toBe(403);
      expect((await instructor.get(`/api/reports/${name}.csv?${WEEK}`)).status).toBe(403);
    }
    const page = await instructor.get('/reports');
    expect(page.status).toBe(200);
    const html = await page.text();
    expect(html).toContain('Clearance funnel');
    expect(html).not.toContain('Revenue and recharge');
    expect(html).not.toContain('Utilisation');
  });

  it('refuses bad dates, reversed and too long ranges and bad machine ids with 422', async () => {
    for (const q of ['from=2026-02-30', 'from=yesterday', 'from=2026-03-08&to=2026-03-01', 'from=2025-01-01&to=2026-03-01', 'machineId=not-a-uuid', 'colour=red']) {
      const res = await admin.get(`/api/reports/utilisation?${q}`);
      expect(res.status, q).toBe(422);
      expect((await body(res)).error.code).toBe('invalid');
    }
  });

  it('without dates, reports the four weeks up to today', async () => {
    const r = await report('revenue', '');
    const today = new Intl.DateTimeFormat('en-CA', { timeZone: tz, year: 'numeric', month: '2-digit', day: '2-digit' }).format(new Date());
    expect(r.period.to).toBe(today);
  });
});
