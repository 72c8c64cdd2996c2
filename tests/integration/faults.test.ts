/**
 * Faults through the API on the real PostgreSQL, S3 fake, payment fake and mail fake: the stop-fault cascade
 * (out of service, bookings bumped, card holds released, e-mails), photo checks (content type, size, count,
 * metadata removed), access to photos, the steward's queue, triage, resolve and back into service.
 * On three machines of this file's own (in a demo group, priced in every price version) with its own member,
 * steward and uncleared person, so a stop fault here bumps no other file's bookings and touches no demo row.
 */
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { saveCard } from '../../src/lib/server/payments/cards';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { createTestMachine, priceTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { newPerson, type TestPerson } from '../support/people';
import ICAL from 'ical.js';
import { iso, setTestRules, siteTime } from '../support/booking';
import { attachment, inbox, to, type Mail, waitForMail } from '../support/mail';
import { expectError } from '../support/api-error';
import { makeDue } from '../support/queue';
import { waitUntil } from '../support/wait';

let admin: Client;
let member: Client;
let steward: Client;
let newbie: Client;
/** this file's own people: a member cleared for its machines, a steward (who also books, with a card), one not cleared */
let memberP: TestPerson;
let stewardP: TestPerson;
/** this file's own three machines (in the first demo group): a stop fault here bumps no other file's bookings */
let lasers: Record<'a' | 'b' | 'c', TestMachine>;
// bookings of this file are 24+ days ahead
const D = 24;

beforeAll(async () => {
  admin = await Client.as('admin');
  lasers = { a: await createTestMachine(admin, 'faults-a'), b: await createTestMachine(admin, 'faults-b'), c: await createTestMachine(admin, 'faults-c') };
  for (const m of Object.values(lasers)) {
    await setTestRules(admin, m.id);
    await priceTestMachine(m.id, 150);
  }
  const codes = Object.values(lasers).map((m) => m.code);
  memberP = await newPerson('faults-member', { clearedFor: codes });
  stewardP = await newPerson('faults-keeper', { roles: ['steward'], clearedFor: codes });
  member = memberP.client;
  steward = stewardP.client;
  newbie = (await newPerson('faults-uncleared')).client;
});

afterAll(async () => {
  for (const m of Object.values(lasers ?? {})) await retireTestMachine(admin, m);
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

const book = (c: Client, machineId: string, startsAt: Date, endsAt: Date) =>
  c.send('POST', '/api/bookings', { machineId, startsAt: iso(startsAt), endsAt: iso(endsAt), materials: [], notes: '' });

/** A small JPEG carrying EXIF with a GPS position and a description we can look for. */
async function photoWithGps(): Promise<Buffer> {
  return sharp({ create: { width: 320, height: 240, channels: 3, background: { r: 180, g: 60, b: 30 } } })
    .jpeg()
    .withExif({
      IFD0: { ImageDescription: 'marker-lighthouse-road' },
      IFD3: { GPSLatitudeRef: 'S', GPSLatitude: '36/1 50/1 30/1', GPSLongitudeRef: 'E', GPSLongitude: '174/1 45/1 0/1' },
    })
    .toBuffer();
}

function report(c: Client, code: string, fields: Record<string, string>, files: { bytes: Uint8Array; name: string; type: string }[] = []) {
  const form = new FormData();
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  for (const f of files) form.append('photos', new Blob([new Uint8Array(f.bytes)], { type: f.type }), f.name);
  return c.fetch(`/api/machines/${code}/faults`, { method: 'POST', body: form });
}

describe('a stop fault', () => {
  it('takes the machine out of service at once, bumps its bookings, releases holds, e-mails; then back into service', async () => {
    const b = lasers.b;
    await saveCard(stewardP.id, 'tok_visa');

    const mine = await body(await book(member, b.id, siteTime(D, 10), siteTime(D, 11)));
    expect(mine.state, JSON.stringify(mine)).toBe('reserved');
    const theirs = await body(await book(steward, b.id, siteTime(D, 14), siteTime(D, 15)));
    expect(theirs.state, JSON.stringify(theirs)).toBe('reserved');
    expect(theirs.paymentNotice).toBeNull();
    const hold = await testDb()('charges').where({ booking_id: theirs.id, kind: 'beam_time' }).first();
    expect(hold.state).toBe('held');
    // a booking on another machine is not touched
    const other = await body(await book(steward, lasers.c.id, siteTime(D, 10), siteTime(D, 11)));

    const photo = await photoWithGps();
    const before = await sharp(photo).metadata();
    expect(before.exif).toBeDefined();
    // the GPS IFD pointer (tag 0x8825, little- or big-endian) is in the original's EXIF
    expect(before.exif!.indexOf(Buffer.from([0x25, 0x88])) >= 0 || before.exif!.indexOf(Buffer.from([0x88, 0x25])) >= 0).toBe(true);

    const res = await report(member, b.code, { summary: 'Coolant alarm and a crack in the tube', details: 'Alarm beeping, hairline crack near the anode.', severity: 'stop' }, [
      { bytes: photo, name: 'tube.jpg', type: 'image/jpeg' },
    ]);
    const r = await body(res);
    expect(res.status, JSON.stringify(r)).toBe(201);
    expect(r).toMatchObject({ machineStatus: 'out of service', fault: { severity: 'stop', status: 'open', machineCode: b.code } });
    // every reserved booking on the machine that has not ended, at least these two
    expect(r.bumpedBookings).toBeGreaterThanOrEqual(2);
    expect(r.fault.photos).toHaveLength(1);

    // one transaction's worth: status, the history row naming the fault, both bookings bumped, audited
    expect((await testDb()('machines').where({ id: b.id }).first()).status).toBe('out of service');
    const change = await testDb()('machine_status_changes').where({ machine_id: b.id, fault_id: r.fault.id }).first();
    expect(change).toMatchObject({ from_status: 'in service', to_status: 'out of service' });
    expect((await testDb()('bookings').where({ id: mine.id }).first()).state).toBe('bumped');
    expect((await testDb()('bookings').where({ id: theirs.id }).first()).state).toBe('bumped');
    expect((await testDb()('bookings').where({ id: other.id }).first()).state).toBe('reserved');
    expect(await testDb()('audit_log').where({ kind: 'booking.bumped', subject_id: mine.id }).first()).toBeTruthy();
    expect(await testDb()('audit_log').where({ kind: 'fault.reported', subject_id: r.fault.id }).first()).toBeTruthy();
    expect(await testDb()('audit_log').where({ kind: 'machine.status_changed', subject_id: b.id }).first()).toBeTruthy();
    // the hold on the steward's card is released (after the commit)
    expect((await testDb()('charges').where({ id: hold.id }).first()).state).toBe('released');

    // e-mails: the people bumped, and the stewards
    // with a calendar cancellation: METHOD:CANCEL for this booking's UID (the member may have other bump e-mails from
    // other files: the one for this booking is found by its UID), and the bumped booking's sequence raised
    const ics = (m: Mail) => m.attachments?.find((x) => x.filename === 'booking-cancelled.ics');
    const cal = await waitUntil('the bump e-mail with a cancellation .ics for the booking', async () => {
      await makeDue('mail.send');
      const mails = (await inbox()).filter((m) => to(memberP.email)(m) && m.subject.startsWith(`Your booking on ${b.name} is cancelled`) && ics(m));
      for (const m of mails) {
        const c = new ICAL.Component(ICAL.parse(await attachment(m.id, ics(m)!.generatedFileName ?? ics(m)!.filename)));
        if (new ICAL.Event(c.getFirstSubcomponent('vevent')!).uid === `${mine.id}@beamwarden`) return c;
      }
      return undefined;
    }, 60_000);
    expect(cal.getFirstPropertyValue('method')).toBe('CANCEL');
    expect((await testDb()('bookings').where({ id: mine.id }).first()).calendar_sequence).toBe(1);
    await waitForMail((m) => to(stewardP.email)(m) && m.subject.startsWith(`STOP: ${b.name}`));

    // no new bookings while out of service
    await expectError(await book(member, b.id, siteTime(D + 1, 10), siteTime(D + 1, 11)), 409, 'machine_out_of_service');

    // the photo: re-encoded, no EXIF (so no GPS) and no description left; the reporter and stewards may see it, others not
    const got = await member.get(r.fault.photos[0].url);
    expect(got.status).toBe(200);
    expect(got.headers.get('content-type')).toBe('image/jpeg');
    const stored = Buffer.from(await got.arrayBuffer());
    const after = await sharp(stored).metadata();
    expect(after.format).toBe('jpeg');
    expect(after.exif).toBeUndefined();
    expect(stored.includes('marker-lighthouse-road')).toBe(false);
    expect((await steward.get(r.fault.photos[0].url)).status).toBe(200);
    expect((await newbie.get(r.fault.photos[0].url)).status).toBe(404);
    expect((await newbie.get('/api/faults')).status).toBe(403);

    // the queue: this fault is there, stop first
    // (other files' machines may have open stop faults too: this one is among the stops, and stops come first)
    const queue = (await body(await steward.get('/api/faults'))) as { id: string; severity: string }[];
    const at = queue.findIndex((f) => f.id === r.fault.id);
    expect(queue[at]).toMatchObject({ id: r.fault.id, severity: 'stop' });
    expect(queue.slice(0, at).every((f) => f.severity === 'stop')).toBe(true);

    // triage with a note, resolve
    const t = await body(await steward.send('POST', `/api/faults/${r.fault.id}/triage`, { note: 'Tube cracked: ordered a replacement.' }));
    expect(t).toMatchObject({ status: 'triaged' });
    expect(t.notes[0]).toMatchObject({ body: 'Tube cracked: ordered a replacement.' });
    const resolved = await body(await steward.send('POST', `/api/faults/${r.fault.id}/resolve`, { resolution: 'Tube replaced, mirrors aligned.' }));
    expect(resolved).toMatchObject({ status: 'resolved', resolution: 'Tube replaced, mirrors aligned.' });

    // back into service: members may not; the checklist is required; then it takes bookings again
    await expectError(await member.send('POST', `/api/machines/${b.id}/status`, { status: 'in service', reason: 'fixed' }), 403, 'forbidden');
    const missing = await expectError(await steward.send('POST', `/api/machines/${b.id}/status`, { status: 'in service', reason: 'Tube replaced' }), 422, 'checklist_incomplete');
    expect(Object.keys(missing.fields ?? {})).toContain('checklist.testFire');
    const back = await steward.send('POST', `/api/machines/${b.id}/status`, {
      status: 'in service', reason: 'Tube replaced and test-fired',
      checklist: { causeFixed: true, interlocksTested: true, coolingAndExtraction: true, testFire: true },
    });
    expect(back.status, await back.clone().text()).toBe(200);
    expect((await testDb()('machines').where({ id: b.id }).first()).status).toBe('in service');
    const last = await testDb()('machine_status_changes').where({ machine_id: b.id }).orderBy('id', 'desc').first();
    expect(last).toMatchObject({ from_status: 'out of service', to_status: 'in service' });
    expect(last.reason).toContain('Tube replaced and test-fired');
    await waitForMail((m) => to(memberP.email)(m) && m.subject === `${b.name} is back in service`);
    expect((await book(member, b.id, siteTime(D + 1, 10), siteTime(D + 1, 11))).status).toBe(201);
  });

  it('a degraded fault marks the machine degraded and keeps its bookings', async () => {
    const c = lasers.c;
    const kept = await body(await book(steward, c.id, siteTime(D + 2, 10), siteTime(D + 2, 11)));
    const res = await report(member, c.code, { summary: 'Air assist weak', severity: 'degraded' });
    const r = await body(res);
    expect(res.status, JSON.stringify(r)).toBe(201);
    expect(r).toMatchObject({ machineStatus: 'degraded', bumpedBookings: 0 });
    expect((await testDb()('bookings').where({ id: kept.id }).first()).state).toBe('reserved');
    expect((await book(steward, c.id, siteTime(D + 3, 10), siteTime(D + 3, 11))).status).toBe(201);
    // from degraded no checklist is needed
    const back = await steward.send('POST', `/api/machines/${c.id}/status`, { status: 'in service', reason: 'Air line reseated' });
    expect(back.status, await back.clone().text()).toBe(200);
  });

  it('a note changes nothing about the machine; signed out is 401; an unknown machine is 404', async () => {
    const r = await body(await report(member, lasers.a.code, { summary: 'Honeycomb bed is worn', severity: 'note' }));
    expect(r).toMatchObject({ machineStatus: 'in service', fault: { severity: 'note' } });
    expect((await report(new Client(), lasers.a.code, { summary: 'x y z', severity: 'note' })).status).toBe(401);
    await expectError(await report(member, 'no-such-laser', { summary: 'Something', severity: 'note' }), 404, 'not_found');
    await expectError(await report(member, lasers.a.code, { summary: 'Something', severity: 'panic' }), 422, 'invalid');
  });
});

describe('photo checks', () => {
  const fields = { summary: 'Lens looks cloudy', severity: 'note' };

  it('refuses an SVG with a script and a renamed program (415)', async () => {
    const svg = Buffer.from('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script><rect width="5" height="5"/></svg>');
    await expectError(await report(member, lasers.a.code, fields, [{ bytes: svg, name: 'lens.svg', type: 'image/svg+xml' }]), 415, 'file_type_refused');
    const elf = Buffer.concat([Buffer.from([0x7f, 0x45, 0x4c, 0x46, 2, 1, 1, 0]), Buffer.alloc(2048, 1)]);
    await expectError(await report(member, lasers.a.code, fields, [{ bytes: elf, name: 'photo.jpg', type: 'image/jpeg' }]), 415, 'file_type_refused');
  });

  it('refuses more than three photos (422) and a 20 MB image (413); nothing is filed', async () => {
    // counted on this file's machine, the one the refused reports name (other files file faults meanwhile)
    const filed = async () => Number((await testDb()('faults').where({ machine_id: lasers.a.id }).count({ n: '*' }).first())?.n);
    const before = await filed();
    const p = await photoWithGps();
    const four = [1, 2, 3, 4].map((i) => ({ bytes: p, name: `p${i}.jpg`, type: 'image/jpeg' }));
    await expectError(await report(member, lasers.a.code, fields, four), 422, 'too_many_photos');
    const big = Buffer.concat([p, Buffer.alloc(20 * 1024 * 1024, 0)]);
    // refused by the request-size limit before the body is read (body_too_large), or by the photo check (file_too_large)
    const tooBig = await report(member, lasers.a.code, fields, [{ bytes: big, name: 'big.jpg', type: 'image/jpeg' }]);
    expect(tooBig.status).toBe(413);
    expect(['body_too_large', 'file_too_large']).toContain((await body(tooBig)).error.code);
    expect(await filed()).toBe(before);
  });

  it('keeps three photos, each re-encoded', async () => {
    const p = await photoWithGps();
    const png = await sharp({ create: { width: 50, height: 50, channels: 4, background: '#336699' } }).png().toBuffer();
    const res = await report(member, lasers.a.code, fields, [
      { bytes: p, name: 'a.jpg', type: 'image/jpeg' }, { bytes: png, name: 'b.png', type: 'image/png' }, { bytes: p, name: 'c.jpg', type: 'image/jpeg' },
    ]);
    const r = await body(res);
    expect(res.status, JSON.stringify(r)).toBe(201);
    expect(r.fault.photos).toHaveLength(3);
    const second = Buffer.from(await (await member.get(r.fault.photos[1].url)).arrayBuffer());
    expect((await sharp(second).metadata()).format).toBe('jpeg');
  });
});
