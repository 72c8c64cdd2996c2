/**
 * Upkeep reminders: the sweep the worker runs hourly e-mails the stewards once when an upkeep item falls due
 * (due soon, then overdue), never twice for the same service cycle, and again only after the work is logged
 * and falls due anew. Run on a machine of this file's own (added through the admin API, retired afterwards),
 * with "now" moved ahead, so the demo machines' upkeep plays no part.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { remindUpkeep } from '../../src/lib/server/upkeep';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { DEMO } from '../support/env';
import { waitForMail } from '../support/mail';

const DAY = 86_400_000;
let admin: Client;
let steward: Client;
let machine: { id: string; name: string; createdAt: Date };

beforeAll(async () => {
  admin = await Client.as('admin');
  steward = await Client.as('steward');
  const groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const code = `t-upkeep-${Date.now().toString(36)}`;
  const res = await admin.send('POST', '/api/machines', {
    code, name: 'Upkeep test laser', groupId, requiredLevel: 'basic', powerW: 50, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 500, bedDepthMm: 300, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  const row = await testDb()('machines').where({ id: m.id }).first('created_at');
  machine = { id: m.id, name: m.name, createdAt: row.created_at };
  // only the lens clean is planned on this machine, every 30 days (the rest switched off), so the test follows one item
  for (const kind of ['mirror_clean', 'alignment_check', 'coolant_change', 'extractor_filter', 'tube_replacement']) {
    const off = await admin.send('PUT', `/api/machines/${m.id}/upkeep/intervals`, { kind, beamHours: null, days: null });
    expect(off.status, await off.clone().text()).toBe(200);
  }
  const lens = await admin.send('PUT', `/api/machines/${m.id}/upkeep/intervals`, { kind: 'lens_clean', beamHours: null, days: 30 });
  expect(lens.status, await lens.clone().text()).toBe(200);
});

afterAll(async () => {
  if (machine) await admin.send('POST', `/api/machines/${machine.id}/retire`, { reason: 'Test machine, no longer needed.' });
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

const at = (days: number) => new Date(machine.createdAt.getTime() + days * DAY);
const sweep = (days: number) => remindUpkeep({ now: at(days), machineIds: [machine.id] });

describe('upkeep reminders', () => {
  it('nothing while the item is far off; one e-mail to each steward when it is due soon, one when overdue, none repeated', async () => {
    expect((await sweep(1)).reminders).toEqual([]);

    const sent = new Date();
    const soon = await sweep(24); // due on day 30: within the 7-day "due soon" window
    expect(soon.reminders.map((r) => [r.kind, r.state])).toEqual([['lens_clean', 'due soon']]);
    expect(soon.stewards).toBeGreaterThan(0);
    const mail = await waitForMail((m) => m.subject === 'Upkeep: 1 item due soon' && m.to.some((t) => t.address === DEMO.steward) && m.text.includes(machine.name), { since: sent });
    expect(mail.text).toMatch(/lens clean — due by/i);
    expect(mail.text).toContain('/upkeep');

    expect((await sweep(25)).reminders).toEqual([]); // the same cycle and state: not again

    const over = await sweep(31);
    expect(over.reminders.map((r) => [r.kind, r.state])).toEqual([['lens_clean', 'overdue']]);
    expect((await sweep(32)).reminders).toEqual([]);
    const rows = await testDb()('upkeep_reminders').where({ machine_id: machine.id }).orderBy('id').select('kind', 'state');
    expect(rows).toEqual([{ kind: 'lens_clean', state: 'due soon' }, { kind: 'lens_clean', state: 'overdue' }]);
  });

  it('logging the work starts a new cycle: quiet until the item falls due again', async () => {
    // the steward logs the lens clean now (upkeep cannot be logged ahead of time); the next cycle counts from it
    const logged = await steward.send('POST', `/api/machines/${machine.id}/upkeep`, { kind: 'lens_clean', notes: 'Cleaned with lens tissue and IPA.' });
    expect(logged.status, await logged.clone().text()).toBe(201);
    const doneAt = new Date((await body(logged)).performedAt);
    const after = (days: number) => remindUpkeep({ now: new Date(doneAt.getTime() + days * DAY), machineIds: [machine.id] });
    expect((await after(1)).reminders).toEqual([]);
    expect((await after(24)).reminders.map((r) => r.state)).toEqual(['due soon']);
    expect((await after(24.5)).reminders).toEqual([]);
  });

  it('the Upkeep screen shows the admin each machine\'s own intervals and marks the rest as defaults; the steward sees no interval forms', async () => {
    const page = await (await admin.get('/upkeep')).text();
    const start = page.indexOf(`Intervals on ${machine.name}`);
    expect(start, 'the admin sees the interval forms of the test machine').toBeGreaterThan(-1);
    const block = page.slice(start, page.indexOf('</details>', start));
    // one form per upkeep kind, each this machine's own setting (none reads "(default)"): the lens every 30 days,
    // the others switched off (both fields empty)
    const forms = block.split('<form').slice(1);
    expect(forms).toHaveLength(6);
    expect(block).not.toContain('(default)');
    const lens = forms.find((f) => f.includes('value="lens_clean"'))!;
    expect(lens).toMatch(/name="days"[^>]*value="30"/);
    const mirror = forms.find((f) => f.includes('value="mirror_clean"'))!;
    expect(mirror).toContain('name="days"');
    expect(mirror).not.toMatch(/name="(days|beamHours)"[^>]*value="\d/);
    // a demo machine has no intervals of its own: its forms say "(default)"
    expect(page.match(/\(default\)/g)?.length ?? 0).toBeGreaterThan(0);
    expect(await (await steward.get('/upkeep')).text()).not.toContain('Intervals on ');
  });
});
