/**
 * The .ics documents, read back with ical.js (an independent parser). RFC 5545 §3.3.5: a DATE-TIME
 * in UTC is written with a trailing "Z" ("FORM #2: DATE WITH UTC TIME"), e.g. 19980119T070000Z.
 */
import ICAL from 'ical.js';
import { describe, expect, it } from 'vitest';
import { buildIcs } from '../../src/lib/ics';
import { localToInstant } from '../../src/lib/availability';

describe('booking calendars (.ics)', () => {
  it('writes UTC date-times that an independent parser reads back as the same instants, across the spring change', () => {
    // 2026-09-27 01:30 NZST → 03:30 NZDT on the wall clock: one hour of real time
    const startsAt = localToInstant(2026, 9, 27, 90, 'Pacific/Auckland');
    const endsAt = localToInstant(2026, 9, 27, 210, 'Pacific/Auckland');
    expect(startsAt.toISOString()).toBe('2026-09-26T13:30:00.000Z');
    expect(endsAt.toISOString()).toBe('2026-09-26T14:30:00.000Z');
    const text = buildIcs('Test', [{ id: 'b1', startsAt, endsAt, summary: 'Laser A booking', location: 'Laser A' }], { method: 'publish', stamp: new Date('2026-09-01T00:00:00Z') });

    expect(text).toMatch(/^BEGIN:VCALENDAR\r\n/);
    expect(text).toContain('DTSTART:20260926T133000Z');
    expect(text).toContain('DTEND:20260926T143000Z');

    const comp = new ICAL.Component(ICAL.parse(text));
    expect(comp.getFirstPropertyValue('method')).toBe('PUBLISH');
    const events = comp.getAllSubcomponents('vevent');
    expect(events).toHaveLength(1);
    const ev = new ICAL.Event(events[0]!);
    expect(ev.summary).toBe('Laser A booking');
    expect(ev.uid).toBe('b1@beamwarden');
    expect(ev.startDate.zone?.tzid).toBe('UTC');
    expect(ev.startDate.toJSDate().toISOString()).toBe(startsAt.toISOString());
    expect(ev.endDate.toJSDate().toISOString()).toBe(endsAt.toISOString());
    expect(ev.duration.toSeconds()).toBe(3600);
  });

  it('marks cancelled bookings as cancelled events', () => {
    const text = buildIcs('Test', [{ id: 'b2', startsAt: new Date('2027-04-03T13:30:00Z'), endsAt: new Date('2027-04-03T15:30:00Z'), summary: 'x', cancelled: true }]);
    const ev = new ICAL.Component(ICAL.parse(text)).getFirstSubcomponent('vevent')!;
    expect(ev.getFirstPropertyValue('status')).toBe('CANCELLED');
    expect(ev.getFirstPropertyValue('dtstart')!.toString()).toBe('2027-04-03T13:30:00Z');
  });

  it('a cancellation keeps the UID, says METHOD:CANCEL and STATUS:CANCELLED, and carries a higher SEQUENCE', () => {
    const ev = { id: 'b3', startsAt: new Date('2027-05-01T00:00:00Z'), endsAt: new Date('2027-05-01T01:00:00Z'), summary: 'Laser B booking' };
    const first = new ICAL.Component(ICAL.parse(buildIcs('Test', [ev], { method: 'publish' })));
    const later = new ICAL.Component(ICAL.parse(buildIcs('Test', [{ ...ev, sequence: 2 }], { method: 'cancel' })));
    expect(first.getFirstPropertyValue('method')).toBe('PUBLISH');
    expect(later.getFirstPropertyValue('method')).toBe('CANCEL');
    const a = new ICAL.Event(first.getFirstSubcomponent('vevent')!);
    const b = new ICAL.Event(later.getFirstSubcomponent('vevent')!);
    expect(b.uid).toBe(a.uid);
    expect(a.sequence).toBe(0);
    expect(b.sequence).toBe(2);
    expect(later.getFirstSubcomponent('vevent')!.getFirstPropertyValue('status')).toBe('CANCELLED');
    expect(first.getFirstSubcomponent('vevent')!.getFirstPropertyValue('status')).toBe('CONFIRMED');
  });

  it('a feed asks subscribers to refresh: REFRESH-INTERVAL and X-PUBLISHED-TTL as durations', () => {
    const text = buildIcs('Feed', [], { refreshSeconds: 3600 });
    expect(text).toContain('REFRESH-INTERVAL;VALUE=DURATION:PT1H\r\n');
    const comp = new ICAL.Component(ICAL.parse(text));
    const refresh = comp.getFirstProperty('refresh-interval')!;
    // ical.js takes the VALUE parameter as the property's type
    expect(refresh.type).toBe('duration');
    expect((refresh.getFirstValue() as ICAL.Duration).toSeconds()).toBe(3600);
    expect(String(comp.getFirstPropertyValue('x-published-ttl'))).toBe('PT1H');
    // without the option neither is written
    const plain = new ICAL.Component(ICAL.parse(buildIcs('Feed', [])));
    expect(plain.getFirstProperty('refresh-interval')).toBeNull();
  });
});
