/**
 * Calendar dates and wall-clock times in an IANA time zone, computed with Intl only (no I/O, no
 * library). Used to turn the dates an admin enters (in the site's time zone) into UTC instants, and to
 * show instants back in that zone.
 */

const partsCache = new Map<string, Intl.DateTimeFormat>();

function formatter(timeZone: string): Intl.DateTimeFormat {
  let f = partsCache.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-CA', {
      timeZone,
      hourCycle: 'h23',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      minute: '2-digit',
      second: '2-digit',
    });
    partsCache.set(timeZone, f);
  }
  return f;
}

interface WallClock {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

export function wallClock(at: Date, timeZone: string): WallClock {
  const p: Record<string, number> = {};
  for (const part of formatter(timeZone).formatToParts(at)) if (part.type !== 'literal') p[part.type] = Number(part.value);
  return { year: p.year!, month: p.month!, day: p.day!, hour: p.hour! % 24, minute: p.minute!, second: p.second! };
}

/** The zone's offset from UTC at `at`, in minutes (east positive: Pacific/Auckland in January → +780). */
export function offsetMinutes(at: Date, timeZone: string): number {
  const w = wallClock(at, timeZone);
  const asUtc = Date.UTC(w.year, w.month - 1, w.day, w.hour, w.minute, w.second);
  return Math.round((asUtc - Math.floor(at.getTime() / 1000) * 1000) / 60_000);
}

const DATE = /^(\d{4})-(\d{2})-(\d{2})$/;

/** True for a real calendar date written YYYY-MM-DD. */
export function isCalendarDate(s: string): boolean {
  const m = DATE.exec(s);
  if (!m) return false;
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  const t = new Date(Date.UTC(y, mo - 1, d));
  return t.getUTCFullYear() === y && t.getUTCMonth() === mo - 1 && t.getUTCDate() === d;
}

/**
 * The first instant of calendar day `date` (YYYY-MM-DD) in `timeZone`. Where the zone skips midnight
 * (a daylight-saving change at 00:00), that is the first wall-clock time that exists on that day.
 */
export function startOfZonedDay(date: string, timeZone: string): Date {
  if (!isCalendarDate(date)) throw new RangeError(`Not a calendar date: ${date}`);
  const [y, mo, d] = date.split('-').map(Number) as [number, number, number];
  const localMidnightAsUtc = Date.UTC(y, mo - 1, d);
  // Try the offsets in force around that moment; the right one maps back onto the wanted day.
  const candidates = new Set<number>();
  for (const probe of [-36, -12, 0, 12, 36]) candidates.add(offsetMinutes(new Date(localMidnightAsUtc + probe * 3_600_000), timeZone));
  let best: number | undefined;
  for (const off of candidates) {
    const instant = localMidnightAsUtc - off * 60_000;
    const w = wallClock(new Date(instant), timeZone);
    if (w.year === y && w.month === mo && w.day === d && w.hour === 0 && w.minute === 0) {
      best = best === undefined ? instant : Math.min(best, instant);
    }
  }
  if (best !== undefined) return new Date(best);
  // Midnight does not exist that day: step forward from the earliest candidate to the first instant of the day.
  let t = localMidnightAsUtc - Math.max(...candidates) * 60_000;
  for (let i = 0; i < 48 * 4; i++, t += 15 * 60_000) {
    const w = wallClock(new Date(t), timeZone);
    if (w.year === y && w.month === mo && w.day === d) return new Date(t);
  }
  throw new RangeError(`Could not find the start of ${date} in ${timeZone}`);
}

/** The calendar day after `date` (YYYY-MM-DD). */
export function nextDate(date: string): string {
  const [y, mo, d] = date.split('-').map(Number) as [number, number, number];
  return new Date(Date.UTC(y, mo - 1, d + 1)).toISOString().slice(0, 10);
}

/** The calendar date (YYYY-MM-DD) of `at` in `timeZone`. */
export function zonedDate(at: Date, timeZone: string): string {
  const w = wallClock(at, timeZone);
  return `${String(w.year).padStart(4, '0')}-${String(w.month).padStart(2, '0')}-${String(w.day).padStart(2, '0')}`;
}

/** `at` as "YYYY-MM-DD HH:MM:SS" wall-clock time in `timeZone` (for CSV and tables). */
export function formatZoned(at: Date, timeZone: string): string {
  const w = wallClock(at, timeZone);
  const two = (n: number) => String(n).padStart(2, '0');
  return `${zonedDate(at, timeZone)} ${two(w.hour)}:${two(w.minute)}:${two(w.second)}`;
}

/**
 * A range of whole days [from, to] in `timeZone` (either end may be missing) as UTC instants
 * [start, end): the end is the start of the day after `to`.
 */
export function zonedDayRange(from: string | undefined, to: string | undefined, timeZone: string): { start?: Date; end?: Date } {
  return {
    ...(from ? { start: startOfZonedDay(from, timeZone) } : {}),
    ...(to ? { end: startOfZonedDay(nextDate(to), timeZone) } : {}),
  };
}
