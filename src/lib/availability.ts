/**
 * Availability arithmetic of bookings: opening hours in the site's IANA time zone, closures, the slot
 * grid, minimum and maximum length, cool-down buffer, lead time, horizon and weekly quota.
 *
 * Pure: no I/O, no clock (the caller passes `now`). Instants are Date objects (UTC); wall-clock times
 * are computed with Intl for the given zone, so days of 23 or 25 hours (daylight-saving changes) come
 * out right. Used by the server (the rules that decide) and by the Book screen (what it shades).
 */

import { localToInstant, offsetMinutes, startOfZonedDayAt, wallClock, zonedWeekBounds, type WallClock } from './time';

import { TIERS, type Tier } from './vocabulary';

export interface BookingRules {
  /** Bookings start and end on this grid of wall-clock minutes (e.g. 15). */
  slotMinutes: number;
  minMinutes: number;
  maxMinutes: number;
  /** Cool-down after each booking that no other booking may use. */
  bufferMinutes: number;
  /** A booking must start at least this long after now. */
  leadMinutes: number;
  /** Bookable up to the end of the site's day `horizonDays` days after today. */
  horizonDays: number;
  /** Cancelling later than this before the start is a late cancellation. */
  cancelCutoffMinutes: number;
}

export const DEFAULT_RULES: BookingRules = {
  slotMinutes: 15,
  minMinutes: 30,
  maxMinutes: 180,
  bufferMinutes: 10,
  leadMinutes: 0,
  horizonDays: 14,
  cancelCutoffMinutes: 120,
};

/** Opening hours for one ISO weekday (1 = Monday … 7 = Sunday), in wall-clock minutes since midnight. */
export interface WeeklyHours {
  weekday: number;
  opensMinute: number;
  /** 1440 = midnight at the end of the day. */
  closesMinute: number;
}

export interface Closure {
  startsAt: Date;
  endsAt: Date;
  reason: string;
}

/** A machine's booking rules as stored: the rules, the weekly quota per tier and the opening hours. */
export interface MachineRules extends BookingRules {
  machineId: string;
  /** Weekly minutes per tier; null = no limit. */
  quotas: Record<Tier, number | null>;
  hours: WeeklyHours[];
}

/** A closure as stored: for one machine, or the whole site (machineId null). */
export interface ClosureRow extends Closure {
  id: string;
  machineId: string | null;
}

/** An active booking's occupied range: its time plus its cool-down. */
export interface Occupied {
  startsAt: Date;
  occupiedUntil: Date;
}

export interface Interval {
  start: Date;
  end: Date;
}

const MIN = 60_000;
const DAY = 86_400_000;

// ---------------------------------------------------------------------------------------------
// Time-zone arithmetic: from the time module (src/lib/time.ts), which states the rule for skipped and repeated times

export { wallClock, localToInstant, offsetMinutes as zoneOffsetMinutes, type WallClock };

/** The local calendar date `days` after the given one (plain calendar arithmetic). */
export function addDays(year: number, month: number, day: number, days: number): { year: number; month: number; day: number } {
  const d = new Date(Date.UTC(year, month - 1, day + days));
  return { year: d.getUTCFullYear(), month: d.getUTCMonth() + 1, day: d.getUTCDate() };
}

/** The site's week (Monday 00:00 to the next Monday 00:00, wall clock) containing `instant`. */
export function localWeek(instant: Date, tz: string): Interval {
  const { from, to } = zonedWeekBounds(instant, tz);
  return { start: from, end: to };
}

/** Minutes of wall-clock time since local midnight (with seconds as a fraction). */
function localMinuteOfDay(instant: Date, tz: string): number {
  const w = wallClock(instant, tz);
  return w.hour * 60 + w.minute + w.second / 60 + (instant.getTime() % 1000) / MIN;
}

/** True when the instant is on the slot grid of wall-clock time (e.g. :00, :15, :30, :45). */
export function isOnGrid(instant: Date, slotMinutes: number, tz: string): boolean {
  const m = localMinuteOfDay(instant, tz);
  return Number.isInteger(m) && m % slotMinutes === 0;
}

/** The first grid instant at or after `instant`. */
export function ceilToGrid(instant: Date, slotMinutes: number, tz: string): Date {
  const off = offsetMinutes(instant, tz) * MIN;
  const local = instant.getTime() + off;
  const step = slotMinutes * MIN;
  return new Date(Math.ceil(local / step) * step - off);
}

/** The last grid instant at or before `instant`. */
export function floorToGrid(instant: Date, slotMinutes: number, tz: string): Date {
  const off = offsetMinutes(instant, tz) * MIN;
  const local = instant.getTime() + off;
  const step = slotMinutes * MIN;
  return new Date(Math.floor(local / step) * step - off);
}

// ---------------------------------------------------------------------------------------------
// Interval arithmetic

export function minutesBetween(a: Date, b: Date): number {
  return (b.getTime() - a.getTime()) / MIN;
}

/** Sorts and merges touching or overlapping intervals. */
export function mergeIntervals(list: Interval[]): Interval[] {
  const sorted = list.filter((i) => i.end > i.start).sort((a, b) => a.start.getTime() - b.start.getTime());
  const out: Interval[] = [];
  for (const i of sorted) {
    const last = out[out.length - 1];
    if (last && i.start.getTime() <= last.end.getTime()) {
      if (i.end > last.end) last.end = i.end;
    } else out.push({ start: i.start, end: i.end });
  }
  return out;
}

/** `from` minus every interval of `cuts`. */
export function subtractIntervals(from: Interval[], cuts: Interval[]): Interval[] {
  let result = mergeIntervals(from);
  for (const cut of mergeIntervals(cuts)) {
    const next: Interval[] = [];
    for (const i of result) {
      if (cut.end <= i.start || cut.start >= i.end) next.push(i);
      else {
        if (cut.start > i.start) next.push({ start: i.start, end: cut.start });
        if (cut.end < i.end) next.push({ start: cut.end, end: i.end });
      }
    }
    result = next;
  }
  return result;
}

function clip(list: Interval[], from: Date, to: Date): Interval[] {
  return list
    .map((i) => ({ start: i.start < from ? from : i.start, end: i.end > to ? to : i.end }))
    .filter((i) => i.end > i.start);
}

// ---------------------------------------------------------------------------------------------
// Opening hours, closures, free ranges

/** The instants the machine is open between `from` and `to`: weekly hours in `tz`, minus closures. */
export function openIntervals(from: Date, to: Date, tz: string, hours: WeeklyHours[], closures: Closure[] = []): Interval[] {
  if (to <= from) return [];
  const first = wallClock(new Date(from.getTime() - DAY), tz);
  const last = startOfZonedDayAt(new Date(to.getTime() + DAY), tz);
  const list: Interval[] = [];
  for (let i = 0; ; i++) {
    const d = addDays(first.year, first.month, first.day, i);
    const dayStart = localToInstant(d.year, d.month, d.day, 0, tz);
    if (dayStart > last) break;
    const js = new Date(Date.UTC(d.year, d.month - 1, d.day)).getUTCDay();
    const weekday = js === 0 ? 7 : js;
    for (const h of hours) {
      if (h.weekday !== weekday) continue;
      list.push({ start: localToInstant(d.year, d.month, d.day, h.opensMinute, tz), end: localToInstant(d.year, d.month, d.day, h.closesMinute, tz) });
    }
    if (i > 800) break; // a guard: callers ask for weeks, not years
  }
  const open = clip(mergeIntervals(list), from, to);
  return subtractIntervals(open, closures.map((c) => ({ start: c.startsAt, end: c.endsAt })));
}

export interface AvailabilityContext {
  now: Date;
  timeZone: string;
  rules: BookingRules;
  hours: WeeklyHours[];
  closures: Closure[];
  /** Active bookings of the machine (their occupied ranges). */
  occupied: Occupied[];
}

/** The last instant a booking may end (end of the site's day `horizonDays` after today). */
export function horizonEnd(now: Date, rules: BookingRules, tz: string): Date {
  const w = wallClock(now, tz);
  const d = addDays(w.year, w.month, w.day, rules.horizonDays + 1);
  return localToInstant(d.year, d.month, d.day, 0, tz);
}

/** The earliest instant a booking may start (now plus the lead time, on the grid). */
export function earliestStart(now: Date, rules: BookingRules, tz: string): Date {
  return ceilToGrid(new Date(now.getTime() + rules.leadMinutes * MIN), rules.slotMinutes, tz);
}

/**
 * Free ranges in which a booking can be placed between `from` and `to`: open, not closed, inside lead
 * time and horizon, not occupied, and leaving room for the cool-down before the next booking. Range
 * ends are on the slot grid; ranges shorter than the minimum booking are left out.
 */
export function freeRanges(from: Date, to: Date, ctx: AvailabilityContext): Interval[] {
  const { rules, timeZone: tz } = ctx;
  const lo = new Date(Math.max(from.getTime(), earliestStart(ctx.now, rules, tz).getTime()));
  const hi = new Date(Math.min(to.getTime(), horizonEnd(ctx.now, rules, tz).getTime()));
  const open = openIntervals(lo, hi, tz, ctx.hours, ctx.closures);
  // a new booking's own cool-down must end before the next booking starts: widen each occupied range backwards
  const taken = ctx.occupied.map((o) => ({ start: new Date(o.startsAt.getTime() - rules.bufferMinutes * MIN), end: o.occupiedUntil }));
  const free = subtractIntervals(open, taken);
  return free
    .map((i) => ({ start: ceilToGrid(i.start, rules.slotMinutes, tz), end: floorToGrid(i.end, rules.slotMinutes, tz) }))
    .filter((i) => minutesBetween(i.start, i.end) >= rules.minMinutes);
}

// ---------------------------------------------------------------------------------------------
// Checking one request

export type RuleCode =
  | 'in_the_past'
  | 'misaligned'
  | 'too_short'
  | 'too_long'
  | 'too_soon'
  | 'too_far_ahead'
  | 'outside_opening_hours'
  | 'quota_exceeded';

export interface RuleViolation {
  code: RuleCode;
  message: string;
}

function hm(minutes: number): string {
  const h = Math.floor(minutes / 60);
  const m = Math.round(minutes % 60);
  if (h && m) return `${h} h ${m} min`;
  return h ? `${h} h` : `${m} min`;
}

/**
 * Checks a requested range against the machine's rules (everything except the quota and overlaps with
 * other bookings, which the server checks inside its transaction). Returns the first rule broken, or null.
 * Class blocks (`kind: 'class'`) are not held to the maximum length.
 */
export function checkRequest(
  req: { startsAt: Date; endsAt: Date; kind?: 'personal' | 'class' | 'hold' },
  ctx: Omit<AvailabilityContext, 'occupied'>,
): RuleViolation | null {
  const { rules, timeZone: tz, now } = ctx;
  const length = minutesBetween(req.startsAt, req.endsAt);
  if (req.startsAt < now) return { code: 'in_the_past', message: 'That time has already started; choose a time in the future.' };
  if (!isOnGrid(req.startsAt, rules.slotMinutes, tz) || !isOnGrid(req.endsAt, rules.slotMinutes, tz)) {
    return { code: 'misaligned', message: `Bookings start and end on the ${rules.slotMinutes}-minute grid (for example 10:00, 10:${String(rules.slotMinutes).padStart(2, '0')}).` };
  }
  if (length < rules.minMinutes) return { code: 'too_short', message: `The shortest booking on this machine is ${hm(rules.minMinutes)}.` };
  if (req.kind !== 'class' && length > rules.maxMinutes) return { code: 'too_long', message: `The longest booking on this machine is ${hm(rules.maxMinutes)}.` };
  if (req.startsAt < earliestStart(now, rules, tz)) {
    return { code: 'too_soon', message: `Book at least ${hm(rules.leadMinutes)} ahead.` };
  }
  if (req.endsAt > horizonEnd(now, rules, tz)) return { code: 'too_far_ahead', message: `You can book up to ${rules.horizonDays} days ahead.` };
  const closure = ctx.closures.find((c) => c.startsAt < req.endsAt && c.endsAt > req.startsAt);
  if (closure) return { code: 'outside_opening_hours', message: `The machine is closed then: ${closure.reason}.` };
  const open = openIntervals(req.startsAt, req.endsAt, tz, ctx.hours, []);
  const covered = open.length === 1 && open[0]!.start.getTime() === req.startsAt.getTime() && open[0]!.end.getTime() === req.endsAt.getTime();
  if (!covered) return { code: 'outside_opening_hours', message: 'That time is outside the opening hours of this machine.' };
  return null;
}

/** The weekly quota check: minutes already booked in the site's week plus the request, against the tier's quota. */
export function checkQuota(usedMinutes: number, requestMinutes: number, quotaMinutes: number | null): RuleViolation | null {
  if (quotaMinutes === null) return null;
  if (usedMinutes + requestMinutes <= quotaMinutes) return null;
  const left = Math.max(0, quotaMinutes - usedMinutes);
  return {
    code: 'quota_exceeded',
    message: `Your weekly limit on this machine is ${hm(quotaMinutes)}; you have ${hm(left)} left this week.`,
  };
}

/** True when cancelling at `now` is after the cut-off (a late cancellation). */
export function isLateCancel(startsAt: Date, now: Date, rules: Pick<BookingRules, 'cancelCutoffMinutes'>): boolean {
  return now.getTime() > startsAt.getTime() - rules.cancelCutoffMinutes * MIN;
}

/** When an unattended booking becomes a no-show: 15 minutes after its start. */
export const NO_SHOW_AFTER_MINUTES = 15;
export function noShowAt(startsAt: Date): Date {
  return new Date(startsAt.getTime() + NO_SHOW_AFTER_MINUTES * MIN);
}

/** The occupied end of a booking: its end plus the cool-down. */
export function occupiedUntil(endsAt: Date, bufferMinutes: number): Date {
  return new Date(endsAt.getTime() + bufferMinutes * MIN);
}

/** "HH:MM" → minutes since midnight ("24:00" → 1440); null when not a time. */
export function parseClock(s: string): number | null {
  const m = /^([01]\d|2[0-4]):([0-5]\d)$/.exec(s);
  if (!m) return null;
  const v = Number(m[1]) * 60 + Number(m[2]);
  return v <= 1440 ? v : null;
}

export function formatClock(minutes: number): string {
  return `${String(Math.floor(minutes / 60)).padStart(2, '0')}:${String(minutes % 60).padStart(2, '0')}`;
}
