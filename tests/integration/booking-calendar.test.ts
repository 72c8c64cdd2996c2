/**
 * Calendars after a change: cancelling a booking (by its owner) and deactivating a person each e-mail a
 * cancellation .ics for the confirmation's UID with METHOD:CANCEL and a higher SEQUENCE (RFC 5546 §3.2.5);
 * the private feed asks subscribers to refresh hourly and leaves cancelled bookings out. Read with ical.js.
 * Own person, Laser C, 30 days ahead in the evening (a day and hours no other file books).
 */
import ICAL from 'ical.js';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb } from '../support/db';
import { iso, machines, setTestRules, siteTime, type MachineRef } from '../support/booking';
import { clearedNew } from '../support/people';
import { attachment, type Mail, waitForMail } from '../support/mail';

const D = 30;
let admin: Client;
let laserC: MachineRef;
let person: Awaited<ReturnType<typeof clearedNew>>;

beforeAll(async () => {
  admin = await Client.as('admin');
  laserC = (await machines(admin))['laser-c'];
  await setTestRules(admin, laserC.id);
  person = await clearedNew('calendar', ['laser-c']);
});

afterAll(async () => {
  await closeTestDb();
});

async function icsOf(mail: Mail, filename: string): Promise<ICAL.Component> {
  const att = mail.attachments?.find((a) => a.filename === filename);
  expect(att, `${filename} attached to "${mail.subject}"`).toBeTruthy();
  expect(att!.contentType).toBe('text/calendar');
  return new ICAL.Component(ICAL.parse(await attachment(mail.id, att!.generatedFileName ?? att!.filename)));
}

const vevent = (cal: ICAL.Component) => new ICAL.Event(cal.getFirstSubcomponent('vevent')!);
const toPerson = (m: Mail) => m.to.some((t) => t.address.toLowerCase() === person.email.toLowerCase());

async function bookAndConfirm(hour: number): Promise<{ id: string; confirmation: ICAL.Component }> {
  const since = new Date();
  const res = await person.client.send('POST', '/api/bookings', {
    machineId: laserC.id, startsAt: iso(siteTime(D, hour)), endsAt: iso(siteTime(D, hour, 30)), materials: [], notes: '',
  });
  const b = await body(res);
  expect(res.status, JSON.stringify(b)).toBe(201);
  const mail = await waitForMail((m) => toPerson(m) && m.subject.startsWith('Booking confirmed: Laser C'), { since });
  return { id: b.id as string, confirmation: await icsOf(mail, 'booking.ics') };
}

describe('cancellations reach the person’s calendar', () => {
  it('the owner cancels: a METHOD:CANCEL .ics with the same UID and a higher SEQUENCE; the feed drops the event and asks for an hourly refresh', async () => {
    const { id, confirmation } = await bookAndConfirm(20);
    const confirmed = vevent(confirmation);
    expect(confirmation.getFirstPropertyValue('method')).toBe('PUBLISH');
    expect(confirmed.uid).toBe(`${id}@beamwarden`);

    const feed = new URL((await body(await person.client.send('POST', '/api/calendar-feed'))).url).pathname;
    const before = await (await new Client().get(feed)).text();
    const uidsBefore = new ICAL.Component(ICAL.parse(before)).getAllSubcomponents('vevent').map((v) => new ICAL.Event(v).uid);
    expect(uidsBefore).toContain(confirmed.uid);

    const since = new Date();
    const c = await person.client.send('POST', `/api/bookings/${id}/cancel`);
    expect(c.status, JSON.stringify(await body(c))).toBe(200);
    const mail = await waitForMail((m) => toPerson(m) && m.subject.startsWith('Booking cancelled: Laser C'), { since });
    expect(mail.text).toMatch(/You cancelled it/);
    const cancel = await icsOf(mail, 'booking-cancelled.ics');
    expect(cancel.getFirstPropertyValue('method')).toBe('CANCEL');
    const cancelled = vevent(cancel);
    expect(cancelled.uid).toBe(confirmed.uid);
    expect(cancelled.sequence).toBeGreaterThan(confirmed.sequence);
    expect(cancel.getFirstSubcomponent('vevent')!.getFirstPropertyValue('status')).toBe('CANCELLED');
    expect(cancelled.startDate.toJSDate().toISOString()).toBe(iso(siteTime(D, 20)));

    const after = await (await new Client().get(feed)).text();
    expect(after).toContain('REFRESH-INTERVAL;VALUE=DURATION:PT1H');
    const cal = new ICAL.Component(ICAL.parse(after));
    expect(String(cal.getFirstPropertyValue('x-published-ttl'))).toBe('PT1H');
    expect(cal.getAllSubcomponents('vevent').map((v) => new ICAL.Event(v).uid)).not.toContain(confirmed.uid);
  });

  it('an admin deactivates the person: their future booking is cancelled with a METHOD:CANCEL .ics for the same UID', async () => {
    const { id, confirmation } = await bookAndConfirm(21);
    const confirmed = vevent(confirmation);
    const since = new Date();
    const res = await admin.send('POST', `/api/people/${person.id}/deactivate`);
    expect(res.status, JSON.stringify(await body(res))).toBe(200);
    // the message of this cancellation (the person's own cancellation above has the same subject)
    const mail = await waitForMail((m) => toPerson(m) && m.subject.startsWith('Booking cancelled: Laser C') && !m.text.includes('You cancelled it'), { since });
    expect(mail.text).toMatch(/deactivated/);
    const cancel = await icsOf(mail, 'booking-cancelled.ics');
    expect(cancel.getFirstPropertyValue('method')).toBe('CANCEL');
    const cancelled = vevent(cancel);
    expect(cancelled.uid).toBe(`${id}@beamwarden`);
    expect(cancelled.uid).toBe(confirmed.uid);
    expect(cancelled.sequence).toBe(confirmed.sequence + 1);
  });
});

describe('the week feed answers 304 while nothing in it changed', () => {
  it('a repeated request with If-None-Match gets 304 and no body; after a booking in the week, 200 and a new ETag', async () => {
    // its own person (the tests above deactivate theirs)
    const viewer = await clearedNew('calendar-etag', ['laser-c']);
    const from = iso(siteTime(D, 0));
    const to = iso(siteTime(D + 1, 0));
    const feedPath = `/api/bookings?machineId=${laserC.id}&from=${encodeURIComponent(from)}&to=${encodeURIComponent(to)}`;
    const first = await viewer.client.get(feedPath);
    expect(first.status).toBe(200);
    const etag = first.headers.get('etag');
    expect(etag).toMatch(/^W\/".+"$/);
    expect(first.headers.get('cache-control')).toBe('private, no-cache');
    await first.text();

    const again = await viewer.client.fetch(feedPath, { headers: { 'if-none-match': etag! } });
    expect(again.status).toBe(304);
    expect(await again.text()).toBe('');

    const res = await viewer.client.send('POST', '/api/bookings', {
      machineId: laserC.id, startsAt: iso(siteTime(D, 17)), endsAt: iso(siteTime(D, 17, 30)), materials: [], notes: '',
    });
    const created = await body<{ id: string }>(res);
    expect(res.status, JSON.stringify(created)).toBe(201);
    const changed = await viewer.client.fetch(feedPath, { headers: { 'if-none-match': etag! } });
    expect(changed.status).toBe(200);
    expect(changed.headers.get('etag')).not.toBe(etag);
    const feed = (await changed.json()) as {
      bookings: { id: string; startsAt: string; endsAt: string; occupiedUntil: string; mine: boolean }[];
      machines: { open: { start: string; end: string }[]; week: { weekStart: string } }[];
    };
    // every time in the feed is written as Date#toISOString writes it (the feed passes PostgreSQL's text through)
    const booked = feed.bookings.find((b) => b.id === created.id);
    expect(booked).toMatchObject({ startsAt: iso(siteTime(D, 17)), endsAt: iso(siteTime(D, 17, 30)), mine: true });
    const isoForm = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$/;
    for (const t of [booked!.occupiedUntil, feed.machines[0]!.week.weekStart, ...feed.machines[0]!.open.flatMap((o) => [o.start, o.end])]) {
      expect(t).toMatch(isoForm);
    }
    expect(new Date(booked!.occupiedUntil).getTime()).toBeGreaterThanOrEqual(new Date(booked!.endsAt).getTime());
  });
});
