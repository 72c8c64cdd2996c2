/**
 * Reports: the query every report takes (a period of whole days in the site's time zone and, optionally,
 * some machines), the site weeks a period spans, and the columns of each report's table (the JSON rows
 * and the CSV export share them). Pure: no I/O, no clock (the caller passes `today`).
 */
import { z } from '@lib/zod';
import { isCalendarDate, nextDate, startOfZonedDay } from './time';
import { localWeek, type Interval } from './availability';

export const REPORTS = ['utilisation', 'revenue', 'clearances', 'faults', 'no-shows'] as const;
export type ReportName = (typeof REPORTS)[number];

/** The longest period one report covers (a little over a year, so a whole year compares with the last). */
export const MAX_PERIOD_DAYS = 400;
/** The period when none is given: the four weeks up to today. */
export const DEFAULT_PERIOD_DAYS = 28;

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
const blank = (v: unknown) => (v === '' ? undefined : v);
const date = z.string().trim().refine(isCalendarDate, 'Use a date written YYYY-MM-DD, e.g. 2026-12-02.');

export const reportQuery = z
  .object({
    from: z.preprocess(blank, date.optional()),
    to: z.preprocess(blank, date.optional()),
    /** One machine id, or several separated by commas. */
    machineId: z.preprocess(
      blank,
      z
        .string()
        .max(2000)
        .transform((s) => [...new Set(s.split(',').map((x) => x.trim().toLowerCase()).filter(Boolean))])
        .refine((ids) => ids.length > 0 && ids.every((id) => UUID.test(id)), 'Give machine ids separated by commas.')
        .optional(),
    ),
  })
  .strict();
export type ReportQuery = z.output<typeof reportQuery>;

export interface Period {
  /** First and last calendar day, both included (site time zone). */
  from: string;
  to: string;
  /** The same as instants: [start, end). */
  start: Date;
  end: Date;
  days: number;
}

export class PeriodError extends Error {
  constructor(
    public readonly field: 'from' | 'to',
    message: string,
  ) {
    super(message);
  }
}

function dayNumber(d: string): number {
  return Date.UTC(Number(d.slice(0, 4)), Number(d.slice(5, 7)) - 1, Number(d.slice(8, 10))) / 86_400_000;
}

function addCalendarDays(d: string, n: number): string {
  return new Date((dayNumber(d) + n) * 86_400_000).toISOString().slice(0, 10);
}

/** The period of a query: missing ends default to the four weeks up to `today`; a reversed or too long range is a PeriodError. */
export function resolvePeriod(q: Pick<ReportQuery, 'from' | 'to'>, today: string, timeZone: string): Period {
  const to = q.to ?? (q.from ? addCalendarDays(q.from, DEFAULT_PERIOD_DAYS - 1) : today);
  const from = q.from ?? addCalendarDays(to, -(DEFAULT_PERIOD_DAYS - 1));
  if (from > to) throw new PeriodError('to', 'The end date is before the start date.');
  const days = dayNumber(to) - dayNumber(from) + 1;
  if (days > MAX_PERIOD_DAYS) throw new PeriodError('to', `A report covers at most ${MAX_PERIOD_DAYS} days; choose a shorter period.`);
  return { from, to, start: startOfZonedDay(from, timeZone), end: startOfZonedDay(nextDate(to), timeZone), days };
}

/** The site's weeks (Monday to Monday, wall clock) that a period touches, each clipped to the period. */
export function periodWeeks(period: Pick<Period, 'start' | 'end'>, timeZone: string): Interval[] {
  const weeks: Interval[] = [];
  let cursor = period.start;
  while (cursor < period.end) {
    const w = localWeek(cursor, timeZone);
    const start = w.start < period.start ? period.start : w.start;
    const end = w.end > period.end ? period.end : w.end;
    weeks.push({ start, end });
    cursor = w.end;
    if (weeks.length > 80) break; // MAX_PERIOD_DAYS / 7 + 2
  }
  return weeks;
}

/** A share as a fraction rounded to four decimals (0.1234 = 12.34 %); null when there is nothing to divide by. */
export function share(part: number, whole: number): number | null {
  if (!(whole > 0)) return null;
  return Math.round((part / whole) * 10_000) / 10_000;
}

// ---------------------------------------------------------------------------------------------
// Rows of each report (the JSON `rows` and the CSV lines have exactly these keys, in this order)

export interface UtilisationRow {
  machine_id: string;
  machine: string;
  week_start: string;
  open_minutes: number;
  booked_minutes: number;
  beam_minutes: number;
  booked_share: number | null;
  beam_share: number | null;
}

export interface RevenueRow {
  month: string;
  machine_id: string;
  machine: string;
  tier: string;
  method: 'card' | 'recharge';
  charges: number;
  gross_minor: number;
  refunded_minor: number;
  net_minor: number;
  tax_minor: number;
  currency: string;
}

export interface ClearanceRow {
  group_id: string;
  group: string;
  quiz_started: number;
  quiz_passed: number;
  /** People with a seat (not cancelled) at an induction session of the group starting in the period. */
  seats_booked: number;
  /** People marked present at such a session. */
  attended: number;
  signed_off: number;
  lapsed: number;
}

export interface FaultRow {
  machine_id: string;
  machine: string;
  note: number;
  degraded: number;
  stop: number;
  open_now: number;
  out_of_service_minutes: number;
  returns_to_service: number;
  mean_minutes_to_return: number | null;
}

export interface NoShowRow {
  person_id: string;
  person: string;
  email: string;
  bookings: number;
  no_shows: number;
  late_cancellations: number;
  no_show_share: number | null;
}

export const COLUMNS = {
  utilisation: ['machine_id', 'machine', 'week_start', 'open_minutes', 'booked_minutes', 'beam_minutes', 'booked_share', 'beam_share'],
  revenue: ['month', 'machine_id', 'machine', 'tier', 'method', 'charges', 'gross_minor', 'refunded_minor', 'net_minor', 'tax_minor', 'currency'],
  clearances: ['group_id', 'group', 'quiz_started', 'quiz_passed', 'seats_booked', 'attended', 'signed_off', 'lapsed'],
  faults: ['machine_id', 'machine', 'note', 'degraded', 'stop', 'open_now', 'out_of_service_minutes', 'returns_to_service', 'mean_minutes_to_return'],
  'no-shows': ['person_id', 'person', 'email', 'bookings', 'no_shows', 'late_cancellations', 'no_show_share'],
} as const satisfies Record<ReportName, readonly string[]>;

/** Charge states that count as revenue (see DEVELOPERS.md "Reports"): money taken, billed to a cost centre, or paid later. */
export const REVENUE_STATES = ['captured', 'refunded', 'recharged', 'settled'] as const;
/** Booking states whose time the machine was held for someone (waitlist holds are not counted). */
export const BOOKED_STATES = ['reserved', 'checked in', 'completed', 'no-show'] as const;
