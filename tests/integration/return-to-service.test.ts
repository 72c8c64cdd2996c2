/**
 * Faults and a machine's way back into service, on a machine this file creates (no other file's bookings or
 * machines are touched): a report with the phone's clientId is stored once however often it is sent; back into
 * service is refused while a stop fault is open (409 open_stop_fault, naming it); resolving says what changed
 * and what is left; "resolve and return to service" does both in one step. The fault form works as a plain
 * multipart form post (no script): answers kept on a refusal, the report filed on success.
 */
import { randomUUID } from 'node:crypto';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { DEMO } from '../support/env';
import { inbox, to, waitForMail } from '../support/mail';
import { expectError } from '../support/api-error';

let admin: Client;
let steward: Client;
let reporter: Client;
let machine: { id: string; code: string; name: string };
const stamp = Date.now().toString(36);
const CHECKS = { causeFixed: true, interlocksTested: true, coolingAndExtraction: true, testFire: true };

beforeAll(async () => {
  admin = await Client.as('admin');
  steward = await Client.as('steward');
  reporter = await Client.as('member');
  const groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const code = `t-fsvc-${stamp}`;
  const res = await admin.send('POST', '/api/machines', {
    code, name: `Fault test laser ${stamp}`, groupId, requiredLevel: 'basic', powerW: 40, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 500, bedDepthMm: 300, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  machine = { id: m.id, code, name: m.name };
});

afterAll(async () => {
  if (machine) await admin.send('POST', `/api/machines/${machine.id}/retire`, { reason: 'Test machine, no longer needed.' });
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

function report(c: Client, fields: Record<string, string>, photos: Buffer[] = []) {
  const form = new FormData();
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  for (const [i, p] of photos.entries()) form.append('photos', new Blob([new Uint8Array(p)], { type: 'image/jpeg' }), `p${i}.jpg`);
  return c.fetch(`/api/machines/${machine.code}/faults`, { method: 'POST', body: form });
}

const setStatus = (status: string, checklist?: typeof CHECKS) =>
  steward.send('POST', `/api/machines/${machine.id}/status`, { status, reason: 'Checked by the steward', ...(checklist ? { checklist } : {}) });

describe('a fault report sent twice with the same clientId', () => {
  it('is stored once: the second send answers 200 with the same fault, no second row, no second e-mail', async () => {
    const clientId = randomUUID();
    const summary = `Coolant alarm ${stamp}`;
    const photo = await sharp({ create: { width: 64, height: 48, channels: 3, background: { r: 10, g: 20, b: 30 } } }).jpeg().toBuffer();
    const first = await report(reporter, { summary, severity: 'stop', clientId }, [photo]);
    const a = await body(first);
    expect(first.status, JSON.stringify(a)).toBe(201);
    expect(a).toMatchObject({ duplicate: false, machineStatus: 'out of service', statusBefore: 'in service' });
    const [again, third] = await Promise.all([report(reporter, { summary, severity: 'stop', clientId }, [photo]), report(reporter, { summary, severity: 'stop', clientId })]);
    for (const res of [again, third]) {
      const b = await body(res);
      expect(res.status, JSON.stringify(b)).toBe(200);
      expect(b).toMatchObject({ duplicate: true, fault: { id: a.fault.id } });
    }
    expect(Number((await testDb()('faults').where({ client_id: clientId }).count('* as n').first())?.n)).toBe(1);
    expect(Number((await testDb()('audit_log').where({ kind: 'fault.reported', subject_id: a.fault.id }).count('* as n').first())?.n)).toBe(1);
    // someone else's clientId is not theirs to answer
    await expectError(await report(steward, { summary, severity: 'note', clientId }), 409, 'client_id_taken');
    await expectError(await report(reporter, { summary, severity: 'note', clientId: 'not-a-uuid' }), 422, 'invalid');
    // the stewards' e-mail went once: a later report's e-mail arrives, and still only one for the first
    await report(reporter, { summary: `Marker ${stamp}`, severity: 'degraded' });
    await waitForMail((m) => to(DEMO.steward)(m) && m.subject.includes(`Marker ${stamp}`));
    const mails = (await inbox()).filter((m) => to(DEMO.steward)(m) && m.subject.includes(summary));
    expect(mails).toHaveLength(1);
  });
});

describe('back into service while a stop fault is open', () => {
  it('is refused with 409 open_stop_fault naming it; resolving says what is left; resolve and return does both', async () => {
    // from the test above: one open stop fault, one open degraded fault; the machine is out of service
    expect((await testDb()('machines').where({ id: machine.id }).first()).status).toBe('out of service');
    const second = await body(await report(reporter, { summary: `Lid interlock loose ${stamp}`, severity: 'stop' }));
    expect(second.statusBefore).toBe('out of service'); // someone else was first
    const refused = await expectError(await setStatus('in service', CHECKS), 409, 'open_stop_fault');
    expect(refused.message).toContain(`Coolant alarm ${stamp}`);
    expect(refused.message).toContain(`Lid interlock loose ${stamp}`);
    expect((await testDb()('machines').where({ id: machine.id }).first()).status).toBe('out of service');

    const stops = await testDb()('faults').where({ machine_id: machine.id, severity: 'stop' }).orderBy('created_at').select('id');
    // resolving one of two: the machine stays out, one stop fault left
    const r1 = await body(await steward.send('POST', `/api/faults/${stops[0].id}/resolve`, { resolution: 'Hose reseated.' }));
    expect(r1).toMatchObject({ status: 'resolved', outcome: { machineStatus: 'out of service', statusChanged: false, openStopFaults: 1 } });
    expect(r1.outcome.next).toContain('1 open stop fault');
    await expectError(await setStatus('in service', CHECKS), 409, 'open_stop_fault');
    // the last one, resolved and returned in one step: the checks are required, then the machine is back —
    // degraded, because the degraded fault is still open
    const noChecks = await expectError(await steward.send('POST', `/api/faults/${stops[1].id}/resolve`, { resolution: 'Interlock fixed.', returnToService: { checklist: { causeFixed: true } } }), 422, 'checklist_incomplete');
    expect(Object.keys(noChecks.fields ?? {})).toContain('checklist.testFire');
    expect((await testDb()('faults').where({ id: stops[1].id }).first()).status).not.toBe('resolved'); // nothing half-written
    const r2 = await body(await steward.send('POST', `/api/faults/${stops[1].id}/resolve`, { resolution: 'Interlock fixed.', returnToService: { checklist: CHECKS } }));
    expect(r2).toMatchObject({ status: 'resolved', outcome: { machineStatus: 'degraded', statusChanged: true, openStopFaults: 0, openFaults: 1 } });
    expect((await testDb()('machines').where({ id: machine.id }).first()).status).toBe('degraded');
    const last = await testDb()('machine_status_changes').where({ machine_id: machine.id }).orderBy('id', 'desc').first();
    expect(last).toMatchObject({ from_status: 'out of service', to_status: 'degraded' });
    // members may not use the shortcut
    expect((await reporter.send('POST', `/api/faults/${stops[1].id}/resolve`, { resolution: 'x'.repeat(5) })).status).toBe(403);
  });
});

describe('the fault form as a plain form (no script)', () => {
  it('keeps the answers on a refusal, and files the report with its photo on success; the same form twice is one report', async () => {
    const page = `/m/${machine.code}/fault`;
    const html = await (await reporter.get(page)).text();
    const clientId = /name="clientId" value="([0-9a-f-]{36})"/.exec(html)?.[1];
    expect(clientId).toBeTruthy();
    expect(html).toContain('enctype="multipart/form-data"');

    const missing = new FormData();
    missing.set('clientId', clientId!);
    missing.set('summary', `Fan rattles ${stamp}`);
    missing.set('details', 'Loud at the back.');
    const refused = await reporter.fetch(page, { method: 'POST', body: missing });
    expect(refused.status).toBe(422);
    const back = await refused.text();
    expect(back).toContain(`value="Fan rattles ${stamp}"`);
    expect(back).toContain('Loud at the back.</textarea>');
    expect(back).toContain('Choose note, degraded or stop.');

    const photo = await sharp({ create: { width: 80, height: 60, channels: 3, background: { r: 200, g: 20, b: 30 } } }).jpeg().toBuffer();
    const full = new FormData();
    full.set('clientId', clientId!);
    full.set('summary', `Fan rattles ${stamp}`);
    full.set('details', 'Loud at the back.');
    full.set('severity', 'note');
    full.append('photos', new Blob([new Uint8Array(photo)], { type: 'image/jpeg' }), 'fan.jpg');
    for (let i = 0; i < 2; i++) {
      const res = await reporter.fetch(page, { method: 'POST', body: full, redirect: 'manual' });
      expect(res.status).toBe(303);
      expect(res.headers.get('location')).toMatch(new RegExp(`^/m/${machine.code}\\?reported=[0-9a-f-]{36}&bumped=0&before=in$`));
    }
    const rows = await testDb()('faults').where({ client_id: clientId });
    expect(rows).toHaveLength(1);
    expect(rows[0].photos).toHaveLength(1);
    const landing = await (await reporter.get(`/m/${machine.code}?reported=${rows[0].id}`)).text();
    expect(landing).toContain('Thank you — the report is in.');
  });
});
