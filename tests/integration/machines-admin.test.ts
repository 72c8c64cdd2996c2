/**
 * Admin › Machines: adding a machine (bookable at once by people cleared for its group), editing what it is
 * (audited before and after; a higher clearance level gates bookings at once), and retiring it (its bookings
 * cancelled with an e-mail, gone from every list and its label page, its code never reused; refused while
 * someone is checked in). Each machine here has a code of its own, so the file can run again on the same database.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { clearedNew } from '../support/people';
import ICAL from 'ical.js';
import { iso, setTestRules, siteTime, TEST_RULES } from '../support/booking';
import { attachment, waitForMail } from '../support/mail';
import { expectError } from '../support/api-error';

let admin: Client;
let member: Client;
let groupId: string;
const stamp = Date.now().toString(36);

/** A machine body as the admin form sends it; `over` changes fields. */
function machineBody(code: string, over: Record<string, unknown> = {}) {
  return {
    // a plain name (the code carries the unique stamp): other screens list retired machines by name
    code, name: `Test laser ${code.split('-')[1]}`, groupId, requiredLevel: 'basic', powerW: 60, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 600, bedDepthMm: 400, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
    ...over,
  };
}

async function create(code: string, over: Record<string, unknown> = {}) {
  const res = await admin.send('POST', '/api/machines', machineBody(code, over));
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  return m as { id: string; code: string; name: string };
}

beforeAll(async () => {
  admin = await Client.as('admin');
  member = await Client.as('member');
  groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
});
afterAll(async () => {
  // the other files expect the three demo lasers: retire what this file added and left in use
  const left = (await testDb()('machines').where('code', 'like', `t-%-${stamp}`).whereNull('retired_at').select('id')) as { id: string }[];
  for (const { id } of left) await admin.send('POST', `/api/machines/${id}/retire`, { reason: 'Test machine, no longer needed.' });
  await closeTestDb();
});

describe('adding a machine', () => {
  it('201: in service, audited, with default rules and weekday hours, listed, with a label page and a hazard sheet', async () => {
    const m = await create(`t-add-${stamp}`, { powerW: 45.5, coolantMinC: 16, coolantMaxC: 22 });
    expect(m).toMatchObject({ status: 'in service', groupId, requiredLevel: 'basic', powerW: 45.5, coolantMinC: 16, coolantMaxC: 22 });
    const audit = await testDb()('audit_log').where({ kind: 'machine.created', subject_id: m.id }).first();
    expect(audit?.after).toMatchObject({ code: m.code, powerW: 45.5 });
    const hours = await testDb()('opening_hours').where({ machine_id: m.id }).orderBy('weekday');
    expect(hours.map((h) => [h.weekday, h.opens_minute, h.closes_minute])).toEqual([1, 2, 3, 4, 5].map((d) => [d, 540, 1020]));
    expect(await testDb()('machine_booking_rules').where({ machine_id: m.id }).first()).toBeTruthy();

    const list = await body<{ id: string }[]>(await member.get('/api/machines'));
    expect(list.some((x) => x.id === m.id)).toBe(true);
    expect((await member.get(`/m/${m.code}`)).status).toBe(200);
    const hazard = await member.get(`/api/machines/${m.id}/hazard`);
    expect(hazard.status).toBe(200);
    const detail = await body(await admin.get(`/api/machines/${m.id}`));
    expect(detail).toMatchObject({ code: m.code, bedWidthMm: 600, lensFocalMm: 50.8 });
  });

  it('refuses a taken code (409), a bad field (422 naming it), a group that does not exist and a coolant range upside down', async () => {
    const taken = await expectError(await admin.send('POST', '/api/machines', machineBody('LASER-A')), 409, 'code_taken'); // codes are lower-cased first
    expect(taken.message).toMatch(/laser-a/);
    const bad = await expectError(await admin.send('POST', '/api/machines', machineBody(`t-bad-${stamp}`, { powerW: 0, bedWidthMm: 12.5 })), 422, 'invalid');
    expect(Object.keys(bad.fields ?? {})).toEqual(expect.arrayContaining(['powerW', 'bedWidthMm']));
    await expectError(await admin.send('POST', '/api/machines', machineBody('Not A Code')), 422, 'invalid');
    await expectError(await admin.send('POST', '/api/machines', machineBody(`t-grp-${stamp}`, { groupId: '00000000-0000-4000-8000-00000000beef' })), 422, 'group_not_found');
    await expectError(await admin.send('POST', '/api/machines', machineBody(`t-cool-${stamp}`, { coolantMinC: 25, coolantMaxC: 15 })), 422, 'invalid');
    expect(await testDb()('machines').where('code', 'like', `t-%-${stamp}`).whereNot('code', `t-add-${stamp}`).count('* as n').first()).toMatchObject({ n: 0 });
  });

  it('only an admin may add, edit or retire (403 for a member and a steward)', async () => {
    const steward = await Client.as('steward');
    for (const who of [member, steward]) {
      await expectError(await who.send('POST', '/api/machines', machineBody(`t-no-${stamp}`)), 403, 'forbidden');
    }
    const laserA = (await testDb()('machines').where({ code: 'laser-a' }).first('id')) as { id: string };
    await expectError(await steward.send('PATCH', `/api/machines/${laserA.id}`, { name: 'Mine now' }), 403, 'forbidden');
    await expectError(await steward.send('POST', `/api/machines/${laserA.id}/retire`, { reason: 'no reason' }), 403, 'forbidden');
    expect((await testDb()('machines').where({ id: laserA.id }).first('name', 'retired_at'))).toMatchObject({ name: 'Laser A', retired_at: null });
  });
});

describe('editing a machine', () => {
  it('changes only what is sent, audits before and after, and a higher level gates bookings at once', async () => {
    const m = await create(`t-edit-${stamp}`);
    await setTestRules(admin, m.id);
    const person = await clearedNew('edit', [m.code]);
    await testDb()('clearances').where({ person_id: person.id }).update({ level: 'basic' });

    const res = await admin.send('PATCH', `/api/machines/${m.id}`, { name: 'Laser E (rotary)', requiredLevel: 'advanced', coolantType: 'air' });
    const after = await body(res);
    expect(res.status, JSON.stringify(after)).toBe(200);
    expect(after).toMatchObject({ name: 'Laser E (rotary)', requiredLevel: 'advanced', coolantType: 'air', coolantMinC: null, powerW: 60, code: m.code });
    const audit = await testDb()('audit_log').where({ kind: 'machine.updated', subject_id: m.id }).first();
    expect(audit?.before).toEqual({ name: m.name, requiredLevel: 'basic', coolantType: 'water' });
    expect(audit?.after).toEqual({ name: 'Laser E (rotary)', requiredLevel: 'advanced', coolantType: 'air' });

    const refused = await expectError(await person.client.send('POST', '/api/bookings', { machineId: m.id, startsAt: iso(siteTime(12, 10)), endsAt: iso(siteTime(12, 11)), materials: [], notes: '' }), 403, 'clearance_required');
    expect(refused.message).toMatch(/advanced/);

    // the code is on the printed label: a PATCH cannot carry it; nothing to change is a 422
    await expectError(await admin.send('PATCH', `/api/machines/${m.id}`, { code: 'other' }), 422, 'invalid');
    await expectError(await admin.send('PATCH', `/api/machines/${m.id}`, {}), 422, 'invalid');
    await expectError(await admin.send('PATCH', `/api/machines/${m.id}`, { coolantType: 'water', coolantMinC: 20, coolantMaxC: 18 }), 422, 'invalid');
    await expectError(await admin.send('PATCH', '/api/machines/00000000-0000-4000-8000-00000000beef', { name: 'Ghost' }), 404, 'not_found');
  });
});

describe('retiring a machine', () => {
  it('cancels its bookings with an e-mail giving the reason, leaves every list and its label page, and its code is never reused', async () => {
    const m = await create(`t-ret-${stamp}`);
    await setTestRules(admin, m.id);
    const person = await clearedNew('retire', [m.code]);
    const made = await person.client.send('POST', '/api/bookings', { machineId: m.id, startsAt: iso(siteTime(12, 10)), endsAt: iso(siteTime(12, 11)), materials: [], notes: '' });
    const booking = await body(made);
    expect(made.status, JSON.stringify(booking)).toBe(201);

    const sent = new Date();
    await expectError(await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: '' }), 422, 'invalid');
    const res = await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'Tube at end of life; replaced by a new machine.' });
    const r = await body(res);
    expect(res.status, JSON.stringify(r)).toBe(200);
    expect(r.cancelledBookings).toBe(1);
    expect(r.machine.retiredAt).toBeTruthy();

    expect((await testDb()('bookings').where({ id: booking.id }).first()).state).toBe('cancelled');
    expect(await testDb()('audit_log').where({ kind: 'machine.retired', subject_id: m.id }).first()).toBeTruthy();
    const mail = await waitForMail((x) => x.subject === `Your booking on ${m.name} is cancelled: the machine is retired` && x.to.some((t) => t.address === person.email), { since: sent });
    expect(mail.text).toContain('Tube at end of life');
    // the person's calendar is told too: the confirmation's UID, METHOD:CANCEL, the sequence raised from 0
    const att = mail.attachments?.find((x) => x.filename === 'booking-cancelled.ics');
    expect(att?.contentType).toBe('text/calendar');
    const cal = new ICAL.Component(ICAL.parse(await attachment(mail.id, att!.generatedFileName ?? att!.filename)));
    expect(cal.getFirstPropertyValue('method')).toBe('CANCEL');
    const ev = new ICAL.Event(cal.getFirstSubcomponent('vevent')!);
    expect(ev.uid).toBe(`${booking.id}@beamwarden`);
    expect(ev.sequence).toBe(1);

    expect((await body<{ id: string }[]>(await member.get('/api/machines'))).some((x) => x.id === m.id)).toBe(false);
    expect((await member.get(`/m/${m.code}`)).status).toBe(404);
    await expectError(await person.client.send('POST', '/api/bookings', { machineId: m.id, startsAt: iso(siteTime(13, 10)), endsAt: iso(siteTime(13, 11)), materials: [], notes: '' }), 404, 'not_found');
    await expectError(await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'again' }), 409, 'machine_retired');
    await expectError(await admin.send('PATCH', `/api/machines/${m.id}`, { name: 'Back' }), 404, 'not_found');
    await expectError(await admin.send('POST', '/api/machines', machineBody(m.code)), 409, 'code_taken');
  });

  it('closes its open faults in the same step ("Machine retired"), so they leave the stewards\' queue; each is audited and its reporter told', async () => {
    const m = await create(`t-rfault-${stamp}`);
    const steward = await Client.as('steward');
    const reporter = await clearedNew('retire-fault', [m.code]);
    const report = async (severity: string, summary: string) => {
      const form = new FormData();
      for (const [k, v] of Object.entries({ severity, summary, details: '' })) form.set(k, v);
      const res = await reporter.client.fetch(`/api/machines/${m.code}/faults`, { method: 'POST', body: form });
      const b = await body(res);
      expect(res.status, JSON.stringify(b)).toBe(201);
      return b.fault.id as string;
    };
    const noted = await report('note', 'Honeycomb bed is bent in one corner');
    const degraded = await report('degraded', 'Air assist is weak');
    expect((await steward.send('POST', `/api/faults/${degraded}/triage`, { note: 'Compressor due for service.' })).status).toBe(200);
    // an earlier, resolved fault keeps its own resolution
    const done = await report('note', 'Lid handle loose');
    expect((await steward.send('POST', `/api/faults/${done}/resolve`, { resolution: 'Handle tightened.' })).status).toBe(200);
    const queue = async () => ((await body(await steward.get(`/api/faults?status=unresolved&machineId=${m.id}`))) as { id: string }[]).map((f) => f.id);
    expect((await queue()).sort()).toEqual([noted, degraded].sort());

    const sent = new Date();
    const res = await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'Replaced by a larger machine.' });
    const r = await body(res);
    expect(res.status, JSON.stringify(r)).toBe(200);
    expect(r.closedFaults).toBe(2);
    expect(await queue()).toEqual([]);
    const rows = await testDb()('faults').whereIn('id', [noted, degraded, done]).select('id', 'status', 'resolution', 'resolved_at', 'resolved_by');
    const byId = new Map(rows.map((f) => [f.id, f]));
    const adminId = ((await testDb()('people').where({ email: 'admin@tidewater.example' }).first('id')) as { id: string }).id;
    for (const id of [noted, degraded]) {
      expect(byId.get(id)).toMatchObject({ status: 'resolved', resolution: 'Machine retired: Replaced by a larger machine.', resolved_by: adminId });
      // in the same transaction as the retirement: the same instant
      const retiredAt = (await testDb()('machines').where({ id: m.id }).first('retired_at')).retired_at as Date;
      expect(new Date(byId.get(id)!.resolved_at).getTime()).toBe(new Date(retiredAt).getTime());
      const audit = await testDb()('audit_log').where({ kind: 'fault.resolved', subject_id: id }).first('actor_id', 'after');
      expect(audit).toMatchObject({ actor_id: adminId, after: { status: 'resolved', closedBy: 'machine retired' } });
    }
    expect(byId.get(done)).toMatchObject({ status: 'resolved', resolution: 'Handle tightened.' });
    expect((await testDb()('audit_log').where({ kind: 'machine.retired', subject_id: m.id }).first('after')).after).toMatchObject({ closedFaults: 2 });
    const mail = await waitForMail((x) => x.subject === `The fault you reported on ${m.name} is closed` && x.to.some((t) => t.address === reporter.email), { since: sent });
    expect(mail.text).toContain('Replaced by a larger machine.');
  });

  it('is refused while someone is checked in on it (409 machine_in_use), and nothing changes', async () => {
    const m = await create(`t-busy-${stamp}`);
    // open all day on a five-minute grid, so a booking can start within the ten minutes before check-in opens
    await setTestRules(admin, m.id, { slotMinutes: 5, hours: TEST_RULES.hours.map((h) => ({ ...h, opensMinute: 0, closesMinute: 1440 })) });
    const person = await clearedNew('busy', [m.code]);
    const startsAt = new Date(Math.ceil((Date.now() + 1000) / 300_000) * 300_000);
    const made = await person.client.send('POST', '/api/bookings', { machineId: m.id, startsAt: iso(startsAt), endsAt: iso(new Date(startsAt.getTime() + 30 * 60_000)), materials: [], notes: '' });
    const booking = await body(made);
    expect(made.status, JSON.stringify(booking)).toBe(201);
    const checkIn = await person.client.send('POST', `/api/bookings/${booking.id}/check-in`, {
      checklist: { extractionOn: true, airAssistOn: true, coolantFlowing: true, lensClean: true, extinguisherInPlace: true, willStay: true }, coolantC: 18,
    });
    expect(checkIn.status, await checkIn.clone().text()).toBe(200);

    await expectError(await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'Moving it to another room.' }), 409, 'machine_in_use');
    expect((await testDb()('machines').where({ id: m.id }).first('retired_at')).retired_at).toBeNull();
    expect((await testDb()('bookings').where({ id: booking.id }).first()).state).toBe('checked in');

    // after check-out the machine can be retired
    const out = await person.client.send('POST', `/api/bookings/${booking.id}/check-out`, { leftCleanAndClear: true });
    expect(out.status, await out.clone().text()).toBe(200);
    expect((await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'Moving it to another room.' })).status).toBe(200);
  });
});
