/**
 * Calendar days and wall-clock times in an IANA time zone — the one place Beamwarden turns a local date or time
 * into an instant and back. Pure (no I/O, no clock); safe in islands. Built on `@date-fns/tz` (`TZDateMini`, a
 * couple of kB in the browser) over the platform's Intl time-zone data.
 *
 * The rule for wall-clock times that do not map to exactly one instant, stated once:
 * - a time that does not exist (clocks go forward over it) moves forward by the length of the gap, as a clock
 *   does: 02:30 on a night the clock jumps 02:00 → 03:00 is 03:30;
 * - a time that happens twice (clocks go back) is the earlier of the two instants;
 * - a day starts at its first instant: where midnight itself is skipped (Asia/Beirut, 2026-03-29), at 01:00.
 */
import { TZDateMini } from '@date-fns/tz';

const MIN = 60_000;
const HOUR = 3_600_000;
const DAY = 86_400_000;

export interface WallClock {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
  /** ISO weekday, 1 = Monday … 7 = Sunday */
  weekday: number;
}

const formatters = new Map<string, Intl.DateTimeFormat>();
function formatter(timeZone: string): Intl.DateTimeFormat {
  let f = formatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-US', {
      timeZone, hourCycle: 'h23', year: 'numeric', month: 'numeric', day: 'numeric', hour: 'numeric', minute: 'numeric', second: 'numeric',
    });
    formatters.set(timeZone, f);
  }
  return f;
}

/** True when `timeZone` is an IANA zone this platform knows. */
export function isTimeZone(timeZone: string): boolean {
  try {
    new Intl.DateTimeFormat('en-US', { timeZone });
    return true;
  } catch {
    return false;
  }
}

/** The wall-clock reading in `timeZone` at an instant. */
export function wallClock(at: Date, timeZone: string): WallClock {
  const p: Record<string, number> = {};
  for (const part of formatter(timeZone).formatToParts(at)) if (part.type !== 'literal') p[part.type] = Number(part.value);
  const year = p.year!, month = p.month!, day = p.day!;
  const js = new Date(Date.UTC(year, month - 1, day)).getUTCDay();
  return { year, month, day, hour: p.hour! % 24, minute: p.minute!, second: p.second!, weekday: js === 0 ? 7 : js };
}

/** The zone's offset from UTC at an instant, in minutes (east positive: Pacific/Auckland in January → +780). */
export function offsetMinutes(at: Date, timeZone: string): number {
  return -new TZDateMini(at.getTime(), timeZone).getTimezoneOffset();
}

// ---------------------------------------------------------------------------------------------
// Local wall-clock time → instant

const INSTANT_CACHE_MAX = 50_000;
const instantCache = new Map<string, number>();

/**
 * The instant at which the wall clock in `timeZone` reads `minuteOfDay` minutes after midnight of the given local
 * date (`minuteOfDay` may be 1440: the next midnight; the date may overflow: day 32 is the next month's first). By
 * the rule above for skipped and repeated times. Remembered: reports ask for the same days again and again.
 */
export function localToInstant(year: number, month: number, day: number, minuteOfDay: number, timeZone: string): Date {
  const key = `${timeZone}|${year}|${month}|${day}|${minuteOfDay}`;
  const known = instantCache.get(key);
  if (known !== undefined) return new Date(known);
  const t = computeLocalToInstant(year, month, day, minuteOfDay, timeZone);
  if (instantCache.size >= INSTANT_CACHE_MAX) instantCache.clear();
  instantCache.set(key, t);
  return new Date(t);
}

function computeLocalToInstant(year: number, month: number, day: number, minuteOfDay: number, timeZone: string): number {
  const wall = Date.UTC(year, month - 1, day) + minuteOfDay * MIN;
  const w = new Date(wall);
  // the library resolves a wall-clock reading in the zone (moving a skipped time forward by the gap)
  const t = new TZDateMini(w.getUTCFullYear(), w.getUTCMonth(), w.getUTCDate(), w.getUTCHours(), w.getUTCMinutes(), w.getUTCSeconds(), w.getUTCMilliseconds(), timeZone).getTime();
  // a repeated time: the library may give the later instant; keep the earliest instant that reads this wall clock
  let best = t;
  for (const probe of [t - 3 * HOUR, t + 3 * HOUR]) {
    const candidate = wall - offsetMinutes(new Date(probe), timeZone) * MIN;
    if (candidate < best && candidate + offsetMinutes(new Date(candidate), timeZone) * MIN === wall) best = candidate;
  }
  return best;
}

// ---------------------------------------------------------------------------------------------
// Calendar dates (YYYY-MM-DD)

const DATE = /^(\d{4})-(\d{2})-(\d{2})$/;

/** True for a real calendar date written YYYY-MM-DD (2026-02-31 is not one). */
export function isCalendarDate(s: string): boolean {
  const m = DATE.exec(s);
  if (!m) return false;
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  const t = new Date(Date.UTC(y, mo - 1, d));
  return t.getUTCFullYear() === y && t.getUTCMonth() === mo - 1 && t.getUTCDate() === d;
}

function parseDate(date: string): [number, number, number] {
  if (!isCalendarDate(date)) throw new RangeError(`Not a calendar date: ${date}`);
  return date.split('-').map(Number) as [number, number, number];
}

/** `date` plus `days` calendar days (plain calendar arithmetic; no zone involved). */
export function addDays(date: string, days: number): string {
  const [y, m, d] = parseDate(date);
  return new Date(Date.UTC(y, m - 1, d + days)).toISOString().slice(0, 10);
}

/** The calendar day after `date`. */
export function nextDate(date: string): string {
  return addDays(date, 1);
}

/** The calendar date (YYYY-MM-DD) of `at` in `timeZone`. */
export function zonedDate(at: Date, timeZone: string): string {
  const w = wallClock(at, timeZone);
  return `${String(w.year).padStart(4, '0')}-${String(w.month).padStart(2, '0')}-${String(w.day).padStart(2, '0')}`;
}

/** The first instant of calendar day `date` in `timeZone` (01:00 where midnight is skipped). */
export function startOfZonedDay(date: string, timeZone: string): Date {
  const [y, m, d] = parseDate(date);
  return localToInstant(y, m, d, 0, timeZone);
}

/** The day in `timeZone` containing `at`, as UTC instants [from, to). */
export function zonedDayBounds(at: Date, timeZone: string): { from: Date; to: Date } {
  const date = zonedDate(at, timeZone);
  return { from: startOfZonedDay(date, timeZone), to: startOfZonedDay(nextDate(date), timeZone) };
}

/** Start of the day in `timeZone` containing `at`. */
export function startOfZonedDayAt(at: Date, timeZone: string): Date {
  return zonedDayBounds(at, timeZone).from;
}

/** The week (Monday 00:00 to the next Monday 00:00, wall clock) in `timeZone` containing `at`. */
export function zonedWeekBounds(at: Date, timeZone: string): { from: Date; to: Date } {
  const w = wallClock(at, timeZone);
  const monday = addDays(zonedDate(at, timeZone), 1 - w.weekday);
  return { from: startOfZonedDay(monday, timeZone), to: startOfZonedDay(addDays(monday, 7), timeZone) };
}

/** The calendar month in `timeZone` containing `at`, as UTC instants [from, to). */
export function zonedMonthBounds(at: Date, timeZone: string): { from: Date; to: Date } {
  const w = wallClock(at, timeZone);
  const first = `${String(w.year).padStart(4, '0')}-${String(w.month).padStart(2, '0')}-01`;
  const next = new Date(Date.UTC(w.year, w.month, 1)).toISOString().slice(0, 10);
  return { from: startOfZonedDay(first, timeZone), to: startOfZonedDay(next, timeZone) };
}

/**
 * A range of whole days [from, to] in `timeZone` (either end may be missing) as UTC instants [start, end): the end
 * is the start of the day after `to`.
 */
export function zonedDayRange(from: string | undefined, to: string | undefined, timeZone: string): { start?: Date; end?: Date } {
  return {
    ...(from ? { start: startOfZonedDay(from, timeZone) } : {}),
    ...(to ? { end: startOfZonedDay(nextDate(to), timeZone) } : {}),
  };
}

/** `at` as "YYYY-MM-DD HH:MM:SS" wall-clock time in `timeZone` (machine-readable: CSV cells, logs). */
export function isoLocal(at: Date, timeZone: string): string {
  const w = wallClock(at, timeZone);
  const two = (n: number) => String(n).padStart(2, '0');
  return `${zonedDate(at, timeZone)} ${two(w.hour)}:${two(w.minute)}:${two(w.second)}`;
}

export const MS = { MIN, HOUR, DAY } as const;
