/**
 * The time module against the time-zone data itself. Expected instants below are worked out by hand from the zone
 * rules in the IANA tz database (each case says which rule) and checked against Intl's own reading of the instant;
 * the property tests compare with @date-fns/tz and Intl across zones with skipped midnights, half- and
 * quarter-hour offsets and half-hour daylight saving.
 */
import { TZDateMini } from '@date-fns/tz';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  addDays, isCalendarDate, localToInstant, offsetMinutes, startOfZonedDay, wallClock, zonedDate, zonedDayBounds,
  zonedDayRange, zonedMonthBounds, zonedWeekBounds,
} from '../../src/lib/time';

const ZONES = [
  'UTC', 'Pacific/Auckland', 'Pacific/Chatham', 'Asia/Beirut', 'America/Santiago', 'America/Havana', 'Africa/Cairo',
  'America/Asuncion', 'Asia/Kolkata', 'Asia/Kathmandu', 'Australia/Adelaide', 'Australia/Lord_Howe', 'America/St_Johns',
  'Europe/London', 'America/New_York', 'Europe/Berlin', 'Asia/Tokyo', 'Pacific/Apia', 'Atlantic/Azores',
];

/** Intl's reading of an instant in a zone, to the minute: "YYYY-MM-DD HH:MM". */
const readers = new Map<string, Intl.DateTimeFormat>();
function intlReading(at: Date, timeZone: string): string {
  let f = readers.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-CA', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit' });
    readers.set(timeZone, f);
  }
  const p = Object.fromEntries(f.formatToParts(at).map((x) => [x.type, x.value]));
  return `${p.year}-${p.month}-${p.day} ${p.hour === '24' ? '00' : p.hour}:${p.minute}`;
}

describe('days that start at an hour other than midnight', () => {
  it('Asia/Beirut 2026-03-29 starts at 01:00 local (clocks jump from 00:00 to 01:00; tz database rule Lebanon)', () => {
    const start = startOfZonedDay('2026-03-29', 'Asia/Beirut');
    // 01:00 at UTC+3 is 22:00 UTC the day before
    expect(start.toISOString()).toBe('2026-03-28T22:00:00.000Z');
    expect(intlReading(start, 'Asia/Beirut')).toBe('2026-03-29 01:00');
    expect(intlReading(new Date(start.getTime() - 60_000), 'Asia/Beirut')).toBe('2026-03-28 23:59');
  });

  it('the day before and after are whole days (Beirut 2026-03-28 is 24 h, 2026-03-29 is 23 h)', () => {
    const d28 = zonedDayBounds(new Date('2026-03-28T12:00:00Z'), 'Asia/Beirut');
    const d29 = zonedDayBounds(new Date('2026-03-29T12:00:00Z'), 'Asia/Beirut');
    expect((d28.to.getTime() - d28.from.getTime()) / 3_600_000).toBe(24);
    expect((d29.to.getTime() - d29.from.getTime()) / 3_600_000).toBe(23);
    expect(d28.to.getTime()).toBe(d29.from.getTime());
  });

  it('Pacific/Auckland: 2026-09-27 02:30 does not exist and moves forward by the gap; 2026-04-05 02:30 happens twice and is the earlier (tz rule NZ)', () => {
    // forward: 02:00 NZST → 03:00 NZDT on 27 Sep 2026; 02:30 → 03:30 NZDT = 14:30 UTC on the 26th
    expect(localToInstant(2026, 9, 27, 150, 'Pacific/Auckland').toISOString()).toBe('2026-09-26T14:30:00.000Z');
    // back: 03:00 NZDT → 02:00 NZST on 5 Apr 2026; the first 02:30 is at +13:00 = 13:30 UTC on the 4th
    expect(localToInstant(2026, 4, 5, 150, 'Pacific/Auckland').toISOString()).toBe('2026-04-04T13:30:00.000Z');
  });

  it('half-hour daylight saving on Lord Howe Island: 2026-10-04 02:00 → 02:30 (tz rule LH)', () => {
    expect(localToInstant(2026, 10, 4, 2 * 60 + 15, 'Australia/Lord_Howe').toISOString()).toBe(localToInstant(2026, 10, 4, 2 * 60 + 45, 'Australia/Lord_Howe').toISOString());
    expect(offsetMinutes(new Date('2026-07-01T00:00:00Z'), 'Australia/Lord_Howe')).toBe(630);
    expect(offsetMinutes(new Date('2027-01-01T00:00:00Z'), 'Australia/Lord_Howe')).toBe(660);
  });
});

describe('calendar dates', () => {
  it('refuses dates that do not exist (2026-02-31, 2026-13-01, 2027-02-29) and takes leap days', () => {
    expect(isCalendarDate('2026-02-31')).toBe(false);
    expect(isCalendarDate('2026-13-01')).toBe(false);
    expect(isCalendarDate('2027-02-29')).toBe(false);
    expect(isCalendarDate('2028-02-29')).toBe(true);
    expect(isCalendarDate('2026-2-3')).toBe(false);
    expect(() => startOfZonedDay('2026-02-31', 'UTC')).toThrow(RangeError);
  });

  it('adds days across months and years', () => {
    expect(addDays('2026-12-31', 1)).toBe('2027-01-01');
    expect(addDays('2028-03-01', -1)).toBe('2028-02-29');
  });

  it('a week runs Monday to Monday and a month first to first, in the zone', () => {
    // 2026-12-03 is a Thursday
    const w = zonedWeekBounds(new Date('2026-12-03T01:00:00Z'), 'Pacific/Auckland');
    expect(intlReading(w.from, 'Pacific/Auckland')).toBe('2026-11-30 00:00');
    expect(intlReading(w.to, 'Pacific/Auckland')).toBe('2026-12-07 00:00');
    const m = zonedMonthBounds(new Date('2026-12-03T01:00:00Z'), 'Europe/Berlin');
    expect(intlReading(m.from, 'Europe/Berlin')).toBe('2026-12-01 00:00');
    expect(intlReading(m.to, 'Europe/Berlin')).toBe('2027-01-01 00:00');
    const r = zonedDayRange('2026-12-01', '2026-12-02', 'UTC');
    expect(r.start?.toISOString()).toBe('2026-12-01T00:00:00.000Z');
    expect(r.end?.toISOString()).toBe('2026-12-03T00:00:00.000Z');
  });
});

describe('properties across many zones (compared with Intl and @date-fns/tz)', () => {
  const instant = fc.integer({ min: Date.UTC(2000, 0, 1), max: Date.UTC(2040, 0, 1) }).map((ms) => new Date(Math.floor(ms / 60_000) * 60_000));
  const zone = fc.constantFrom(...ZONES);

  it('wallClock reads what Intl reads, and the offset is what @date-fns/tz says', () => {
    fc.assert(fc.property(instant, zone, (at, tz) => {
      const w = wallClock(at, tz);
      const two = (n: number) => String(n).padStart(2, '0');
      expect(`${w.year}-${two(w.month)}-${two(w.day)} ${two(w.hour)}:${two(w.minute)}`).toBe(intlReading(at, tz));
      expect(offsetMinutes(at, tz)).toBe(-new TZDateMini(at.getTime(), tz).getTimezoneOffset());
    }), { numRuns: 500 });
  });

  it('a wall-clock reading maps back to the earliest instant that shows it', () => {
    fc.assert(fc.property(instant, zone, (at, tz) => {
      const w = wallClock(at, tz);
      const back = localToInstant(w.year, w.month, w.day, w.hour * 60 + w.minute, tz);
      expect(intlReading(back, tz)).toBe(intlReading(at, tz));
      expect(back.getTime()).toBeLessThanOrEqual(at.getTime());
      // no earlier instant shows the same reading (zones shift by 30, 60 or 120 minutes)
      for (const m of [30, 60, 120]) {
        const earlier = new Date(back.getTime() - m * 60_000);
        if (intlReading(earlier, tz) === intlReading(at, tz)) throw new Error(`earlier instant ${earlier.toISOString()} reads the same in ${tz}`);
      }
    }), { numRuns: 400 });
  });

  it('a day starts at its first instant: the minute before belongs to the day before', () => {
    fc.assert(fc.property(instant, zone, (at, tz) => {
      const date = zonedDate(at, tz);
      const start = startOfZonedDay(date, tz);
      expect(zonedDate(start, tz)).toBe(date);
      expect(zonedDate(new Date(start.getTime() - 60_000), tz)).toBe(addDays(date, -1));
      expect(start.getTime()).toBeLessThanOrEqual(at.getTime());
      const { to } = zonedDayBounds(at, tz);
      expect(to.getTime()).toBeGreaterThan(at.getTime());
      // a day is 23 to 25 hours long (Lord Howe: 23.5 or 24.5)
      expect((to.getTime() - start.getTime()) / 3_600_000).toBeGreaterThanOrEqual(22.5);
      expect((to.getTime() - start.getTime()) / 3_600_000).toBeLessThanOrEqual(25.5);
    }), { numRuns: 400 });
  });
});
