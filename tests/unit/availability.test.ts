/**
 * The availability module: opening hours in the site's zone (Pacific/Auckland), both daylight-saving
 * changes, the slot grid, lengths, cool-down, lead time, horizon, quota and cut-off.
 *
 * New Zealand daylight time (from memory, the NZ Time Act rule since 2007): clocks go forward at
 * 02:00 NZST to 03:00 NZDT on the last Sunday of September (2026-09-27) and back at 03:00 NZDT to
 * 02:00 NZST on the first Sunday of April (2027-04-04). NZST = UTC+12, NZDT = UTC+13.
 */
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_RULES,
  ceilToGrid,
  checkQuota,
  checkRequest,
  freeRanges,
  isLateCancel,
  isOnGrid,
  localToInstant,
  localWeek,
  minutesBetween,
  openIntervals,
  parseClock,
  subtractIntervals,
  wallClock,
  zoneOffsetMinutes,
  type BookingRules,
  type WeeklyHours,
} from '../../src/lib/availability';

const TZ = 'Pacific/Auckland';
const Z = (s: string) => new Date(s);
const everyDay = (opens: number, closes: number): WeeklyHours[] => [1, 2, 3, 4, 5, 6, 7].map((weekday) => ({ weekday, opensMinute: opens, closesMinute: closes }));
const rules = (over: Partial<BookingRules> = {}): BookingRules => ({ ...DEFAULT_RULES, ...over });

describe('time-zone arithmetic in Pacific/Auckland', () => {
  it('knows the offset either side of both changes', () => {
    expect(zoneOffsetMinutes(Z('2026-09-26T13:59:00Z'), TZ)).toBe(720); // 01:59 NZST
    expect(zoneOffsetMinutes(Z('2026-09-26T14:00:00Z'), TZ)).toBe(780); // 03:00 NZDT
    expect(zoneOffsetMinutes(Z('2027-04-03T13:59:00Z'), TZ)).toBe(780); // 02:59 NZDT
    expect(zoneOffsetMinutes(Z('2027-04-03T14:00:00Z'), TZ)).toBe(720); // 02:00 NZST
  });

  it('turns wall-clock times into the right instants on both sides of each change', () => {
    expect(localToInstant(2026, 9, 26, 9 * 60, TZ).toISOString()).toBe('2026-09-25T21:00:00.000Z');
    expect(localToInstant(2026, 9, 27, 9 * 60, TZ).toISOString()).toBe('2026-09-26T20:00:00.000Z');
    expect(localToInstant(2027, 4, 3, 9 * 60, TZ).toISOString()).toBe('2027-04-02T20:00:00.000Z');
    expect(localToInstant(2027, 4, 4, 9 * 60, TZ).toISOString()).toBe('2027-04-03T21:00:00.000Z');
  });

  it('a time skipped by the spring change moves forward by the gap; a repeated autumn time takes the first', () => {
    expect(localToInstant(2026, 9, 27, 150, TZ).toISOString()).toBe('2026-09-26T14:30:00.000Z'); // 02:30 → 03:30 NZDT
    expect(localToInstant(2027, 4, 4, 150, TZ).toISOString()).toBe('2027-04-03T13:30:00.000Z'); // 02:30 NZDT, the first of two
  });

  it('the spring Sunday has 23 hours and the autumn Sunday 25', () => {
    expect(minutesBetween(localToInstant(2026, 9, 27, 0, TZ), localToInstant(2026, 9, 27, 1440, TZ))).toBe(23 * 60);
    expect(minutesBetween(localToInstant(2027, 4, 4, 0, TZ), localToInstant(2027, 4, 4, 1440, TZ))).toBe(25 * 60);
    expect(minutesBetween(localToInstant(2026, 9, 28, 0, TZ), localToInstant(2026, 9, 28, 1440, TZ))).toBe(24 * 60);
  });

  it('weeks run Monday to Monday on the wall clock, 167 and 169 hours long across the changes', () => {
    const spring = localWeek(Z('2026-09-27T10:00:00Z'), TZ);
    expect(wallClock(spring.start, TZ)).toMatchObject({ year: 2026, month: 9, day: 21, hour: 0, minute: 0, weekday: 1 });
    expect(minutesBetween(spring.start, spring.end)).toBe(167 * 60);
    const autumn = localWeek(Z('2027-04-04T10:00:00Z'), TZ);
    expect(wallClock(autumn.start, TZ)).toMatchObject({ month: 3, day: 29, weekday: 1 });
    expect(minutesBetween(autumn.start, autumn.end)).toBe(169 * 60);
  });
});

describe('opening hours', () => {
  it('09:00–21:00 opens at 09:00 local every day across the spring change (21:00Z, then 20:00Z)', () => {
    const open = openIntervals(localToInstant(2026, 9, 26, 0, TZ), localToInstant(2026, 9, 29, 0, TZ), TZ, everyDay(540, 1260));
    const starts = open.map((i) => i.start.toISOString());
    expect(starts).toEqual(['2026-09-25T21:00:00.000Z', '2026-09-26T20:00:00.000Z', '2026-09-27T20:00:00.000Z']);
    for (const i of open) expect(minutesBetween(i.start, i.end)).toBe(12 * 60);
  });

  it('09:00–21:00 across the autumn change (20:00Z, then 21:00Z)', () => {
    const open = openIntervals(localToInstant(2027, 4, 3, 0, TZ), localToInstant(2027, 4, 5, 0, TZ), TZ, everyDay(540, 1260));
    expect(open.map((i) => i.start.toISOString())).toEqual(['2027-04-02T20:00:00.000Z', '2027-04-03T21:00:00.000Z']);
    for (const i of open) expect(minutesBetween(i.start, i.end)).toBe(12 * 60);
  });

  it('a 00:00–24:00 day is 23 h on the spring Sunday and 25 h on the autumn Sunday; days are not run together', () => {
    const sunday: WeeklyHours[] = [{ weekday: 7, opensMinute: 0, closesMinute: 1440 }];
    const spring = openIntervals(localToInstant(2026, 9, 20, 0, TZ), localToInstant(2026, 9, 28, 0, TZ), TZ, sunday);
    expect(spring.map((i) => minutesBetween(i.start, i.end))).toEqual([24 * 60, 23 * 60]);
    const autumn = openIntervals(localToInstant(2027, 4, 1, 0, TZ), localToInstant(2027, 4, 6, 0, TZ), TZ, sunday);
    expect(autumn.map((i) => minutesBetween(i.start, i.end))).toEqual([25 * 60]);
  });

  it('closures are cut out of the open time', () => {
    const open = openIntervals(Z('2026-12-06T20:00:00Z'), Z('2026-12-07T09:00:00Z'), TZ, everyDay(540, 1260), [
      { startsAt: Z('2026-12-06T22:00:00Z'), endsAt: Z('2026-12-07T00:00:00Z'), reason: 'lens clean' },
    ]);
    // 2026-12-07 09:00 NZDT = 2026-12-06T20:00Z
    expect(open.map((i) => [i.start.toISOString(), i.end.toISOString()])).toEqual([
      ['2026-12-06T20:00:00.000Z', '2026-12-06T22:00:00.000Z'],
      ['2026-12-07T00:00:00.000Z', '2026-12-07T08:00:00.000Z'],
    ]);
  });

  it('interval subtraction keeps the pieces on both sides', () => {
    const r = subtractIntervals([{ start: Z('2026-01-01T00:00:00Z'), end: Z('2026-01-01T10:00:00Z') }], [{ start: Z('2026-01-01T02:00:00Z'), end: Z('2026-01-01T03:00:00Z') }]);
    expect(r).toHaveLength(2);
  });
});

describe('checking a request', () => {
  const now = Z('2026-09-20T00:00:00Z');
  const ctx = (over: Partial<BookingRules> = {}, hours = everyDay(540, 1260)) => ({ now, timeZone: TZ, rules: rules(over), hours, closures: [] });
  // 2026-09-21 (Monday) 10:00 NZST = 2026-09-20T22:00Z
  const at = (h: number, m = 0) => localToInstant(2026, 9, 21, h * 60 + m, TZ);

  it('accepts a booking inside the hours, on the grid, within the limits', () => {
    expect(checkRequest({ startsAt: at(10), endsAt: at(11, 30) }, ctx())).toBeNull();
  });

  it('names each broken rule with its code', () => {
    expect(checkRequest({ startsAt: Z('2026-09-19T22:00:00Z'), endsAt: Z('2026-09-19T23:00:00Z') }, ctx())?.code).toBe('in_the_past');
    expect(checkRequest({ startsAt: at(10, 5), endsAt: at(11) }, ctx())?.code).toBe('misaligned');
    expect(checkRequest({ startsAt: at(10), endsAt: at(10, 15) }, ctx())?.code).toBe('too_short');
    expect(checkRequest({ startsAt: at(10), endsAt: at(13, 15) }, ctx())?.code).toBe('too_long');
    expect(checkRequest({ startsAt: at(10), endsAt: at(13, 15), kind: 'class' }, ctx())).toBeNull();
    expect(checkRequest({ startsAt: at(10), endsAt: at(11) }, ctx({ leadMinutes: 60 * 48 }))?.code).toBe('too_soon');
    expect(checkRequest({ startsAt: at(10), endsAt: at(11) }, ctx({ horizonDays: 0 }))?.code).toBe('too_far_ahead');
    expect(checkRequest({ startsAt: at(8), endsAt: at(9, 30) }, ctx())?.code).toBe('outside_opening_hours');
    expect(checkRequest({ startsAt: at(20), endsAt: at(21, 30) }, ctx())?.code).toBe('outside_opening_hours');
    const closed = { ...ctx(), closures: [{ startsAt: at(11), endsAt: at(12), reason: 'Mirror alignment' }] };
    const c = checkRequest({ startsAt: at(10), endsAt: at(11, 30) }, closed);
    expect(c?.code).toBe('outside_opening_hours');
    expect(c?.message).toContain('Mirror alignment');
  });

  it('the horizon ends at the end of the site day `horizonDays` after today', () => {
    // now is 2026-09-20 12:00 NZST (Sunday); 1 day ahead → bookable until Monday 21 Sept 24:00
    expect(checkRequest({ startsAt: at(20), endsAt: at(21) }, ctx({ horizonDays: 1 }, everyDay(0, 1440)))).toBeNull();
  });

  it('length is real elapsed time: 01:00–04:00 on the spring Sunday is 2 h, within a 2.5 h maximum', () => {
    const open = everyDay(0, 1440);
    const springStart = localToInstant(2026, 9, 27, 60, TZ);
    const springEnd = localToInstant(2026, 9, 27, 240, TZ);
    expect(minutesBetween(springStart, springEnd)).toBe(120);
    expect(checkRequest({ startsAt: springStart, endsAt: springEnd }, { ...ctx({ maxMinutes: 150 }, open) })).toBeNull();
    // the same wall-clock hours a week earlier are 3 h: too long
    const before = { startsAt: localToInstant(2026, 9, 20, 60, TZ), endsAt: localToInstant(2026, 9, 20, 240, TZ) };
    expect(checkRequest(before, { ...ctx({ maxMinutes: 150 }, open), now: Z('2026-09-19T00:00:00Z') })?.code).toBe('too_long');
    // 01:00–04:00 on the autumn Sunday is 4 h
    expect(minutesBetween(localToInstant(2027, 4, 4, 60, TZ), localToInstant(2027, 4, 4, 240, TZ))).toBe(240);
  });

  it('the grid follows the wall clock on both sides of the autumn change', () => {
    expect(isOnGrid(Z('2027-04-03T13:45:00Z'), 15, TZ)).toBe(true); // 02:45 NZDT
    expect(isOnGrid(Z('2027-04-03T14:15:00Z'), 15, TZ)).toBe(true); // 02:15 NZST
    expect(isOnGrid(Z('2027-04-03T14:20:00Z'), 15, TZ)).toBe(false);
    expect(ceilToGrid(Z('2027-04-03T14:01:00Z'), 15, TZ).toISOString()).toBe('2027-04-03T14:15:00.000Z');
    // a zone with a 45-minute offset keeps the grid on its own wall clock (Nepal, UTC+5:45)
    expect(isOnGrid(Z('2026-06-01T04:15:00Z'), 30, 'Asia/Kathmandu')).toBe(true); // 10:00 local
    expect(isOnGrid(Z('2026-06-01T04:00:00Z'), 30, 'Asia/Kathmandu')).toBe(false);
  });
});

describe('free ranges', () => {
  it('leave the cool-down after each booking and room for the new booking’s own cool-down before the next', () => {
    const day = (h: number, m = 0) => localToInstant(2026, 12, 7, h * 60 + m, TZ);
    const free = freeRanges(day(0), day(24), {
      now: Z('2026-12-01T00:00:00Z'),
      timeZone: TZ,
      rules: rules({ bufferMinutes: 10 }),
      hours: everyDay(540, 1260),
      closures: [],
      occupied: [{ startsAt: day(12), occupiedUntil: day(13, 10) }],
    });
    expect(free.map((i) => [wallClock(i.start, TZ).hour * 60 + wallClock(i.start, TZ).minute, wallClock(i.end, TZ).hour * 60 + wallClock(i.end, TZ).minute])).toEqual([
      [9 * 60, 11 * 60 + 45], // 11:50 (12:00 less the new booking's cool-down) floored to the grid
      [13 * 60 + 15, 21 * 60], // 13:10 rounded up to the grid
    ]);
  });

  it('start no earlier than now plus the lead time and drop slivers shorter than the minimum', () => {
    const now = localToInstant(2026, 12, 7, 20 * 60 + 40, TZ);
    const free = freeRanges(localToInstant(2026, 12, 7, 0, TZ), localToInstant(2026, 12, 8, 0, TZ), {
      now,
      timeZone: TZ,
      rules: rules({ minMinutes: 30 }),
      hours: everyDay(540, 1260),
      closures: [],
      occupied: [],
    });
    expect(free).toEqual([]); // 20:45–21:00 is shorter than 30 min
  });
});

describe('quota and cancellation', () => {
  it('the weekly quota counts what is booked plus the request (4 h = 240 min, common practice)', () => {
    expect(checkQuota(180, 60, 240)).toBeNull();
    const over = checkQuota(200, 60, 240);
    expect(over?.code).toBe('quota_exceeded');
    expect(over?.message).toContain('40 min left');
    expect(checkQuota(10_000, 60, null)).toBeNull();
  });

  it('a cancellation later than the cut-off is late', () => {
    const start = Z('2026-12-07T22:00:00Z');
    expect(isLateCancel(start, Z('2026-12-07T19:59:00Z'), { cancelCutoffMinutes: 120 })).toBe(false);
    expect(isLateCancel(start, Z('2026-12-07T20:01:00Z'), { cancelCutoffMinutes: 120 })).toBe(true);
  });

  it('clock strings', () => {
    expect(parseClock('09:30')).toBe(570);
    expect(parseClock('24:00')).toBe(1440);
    expect(parseClock('24:30')).toBeNull();
    expect(parseClock('9:30')).toBeNull();
  });
});
