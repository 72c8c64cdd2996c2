/**
 * Upkeep forecast: tube hours from logged beam time, intervals in beam hours and/or days, and due dates
 * projected from recent use. Pure (no I/O, no clock: `now` is passed in).
 *
 * Default intervals are common practice, not a manufacturer's schedule; an admin sets each machine's own.
 * REFERENCE.md: inspect optics before each session, clean lens and mirrors when dirty, typically weekly under
 * heavy use; DC glass tubes last ~1 000–10 000 h, RF metal tubes ~20 000–45 000 h before re-gassing.
 */

export const UPKEEP_KINDS = ['lens_clean', 'mirror_clean', 'alignment_check', 'coolant_change', 'extractor_filter', 'tube_replacement'] as const;
export type UpkeepKind = (typeof UPKEEP_KINDS)[number];

export const UPKEEP_LABELS: Record<UpkeepKind, string> = {
  lens_clean: 'Lens clean',
  mirror_clean: 'Mirror clean',
  alignment_check: 'Alignment check',
  coolant_change: 'Coolant change',
  extractor_filter: 'Extractor filter',
  tube_replacement: 'Tube replacement',
};

/** An interval: due after `beamHours` of beam time or `days` of calendar time, whichever comes first. Both null: not planned. */
export interface UpkeepInterval {
  beamHours: number | null;
  days: number | null;
}

/** Rated life assumed for a tube when none was recorded (common practice, at the low end of REFERENCE.md's ranges). */
export const DEFAULT_TUBE_LIFE_HOURS = { dc_glass: 2000, rf_metal: 20000 } as const;

/** Common-practice defaults for a machine of this tube and cooling. */
export function defaultIntervals(tubeType: 'dc_glass' | 'rf_metal', coolantType: 'water' | 'air'): Record<UpkeepKind, UpkeepInterval> {
  return {
    lens_clean: { beamHours: 8, days: 7 }, // weekly under heavy use (REFERENCE.md), or about a working day of beam
    mirror_clean: { beamHours: 20, days: 14 }, // common practice
    alignment_check: { beamHours: 40, days: 30 }, // common practice
    coolant_change: coolantType === 'water' ? { beamHours: null, days: 90 } : { beamHours: null, days: null }, // common practice: distilled water every ~3 months
    extractor_filter: { beamHours: 100, days: 180 }, // common practice; depends heavily on the materials cut
    tube_replacement: { beamHours: DEFAULT_TUBE_LIFE_HOURS[tubeType], days: null },
  };
}

export type DueState = 'overdue' | 'due soon' | 'ok' | 'not planned';

export interface ForecastInput {
  interval: UpkeepInterval;
  /** When it was last done; null when never logged (then the day interval counts from `since`). */
  lastDoneAt: Date | null;
  /** Fallback start of the count when never logged (e.g. when the machine was added). */
  since: Date;
  /** Beam minutes logged since it was last done. */
  beamMinutesSince: number;
  /** Beam minutes in the recent window (default 30 days), for the rate of use. */
  recentBeamMinutes: number;
  windowDays?: number;
  now: Date;
  /** "Due soon" when due within this many days (default 7). */
  soonDays?: number;
}

export interface Forecast {
  state: DueState;
  /** The projected due instant (the earlier of the day limit and the beam-hour limit at the recent rate); null when neither applies. */
  dueAt: Date | null;
  /** Which limit decides the date. */
  by: 'days' | 'beam hours' | null;
  /** Beam hours left before the beam-hour limit (negative when past); null without a beam-hour interval. */
  beamHoursLeft: number | null;
  /** Recent rate of use in beam hours per day. */
  hoursPerDay: number;
}

const DAY_MS = 86_400_000;

/** Beam hours per day over the recent window. */
export function beamHoursPerDay(recentBeamMinutes: number, windowDays = 30): number {
  if (windowDays <= 0) throw new RangeError('windowDays must be positive');
  return Math.max(0, recentBeamMinutes) / 60 / windowDays;
}

export function forecast(input: ForecastInput): Forecast {
  const { interval, now } = input;
  const rate = beamHoursPerDay(input.recentBeamMinutes, input.windowDays ?? 30);
  const soonMs = (input.soonDays ?? 7) * DAY_MS;
  if (interval.beamHours === null && interval.days === null) return { state: 'not planned', dueAt: null, by: null, beamHoursLeft: null, hoursPerDay: rate };

  const from = input.lastDoneAt ?? input.since;
  const byDays = interval.days !== null ? new Date(from.getTime() + interval.days * DAY_MS) : null;

  let beamHoursLeft: number | null = null;
  let byBeam: Date | null = null;
  if (interval.beamHours !== null) {
    beamHoursLeft = interval.beamHours - input.beamMinutesSince / 60;
    if (beamHoursLeft <= 0) byBeam = now;
    else if (rate > 0) byBeam = new Date(now.getTime() + (beamHoursLeft / rate) * DAY_MS);
  }

  let dueAt: Date | null = null;
  let by: Forecast['by'] = null;
  if (byDays && (!byBeam || byDays.getTime() <= byBeam.getTime())) {
    dueAt = byDays;
    by = 'days';
  } else if (byBeam) {
    dueAt = byBeam;
    by = 'beam hours';
  }

  let state: DueState = 'ok';
  if ((beamHoursLeft !== null && beamHoursLeft <= 0) || (byDays && byDays.getTime() <= now.getTime())) state = 'overdue';
  else if (dueAt && dueAt.getTime() - now.getTime() <= soonMs) state = 'due soon';
  return { state, dueAt, by, beamHoursLeft: beamHoursLeft === null ? null : Math.round(beamHoursLeft * 10) / 10, hoursPerDay: rate };
}

/** Tube hours: beam minutes since the tube was fitted, in hours (one decimal). */
export function tubeHours(beamMinutesSinceFitted: number): number {
  return Math.round((Math.max(0, beamMinutesSinceFitted) / 60) * 10) / 10;
}

/** Share of the tube's rated life used, 0–1+ (above 1 when past its rating). */
export function tubeLifeUsed(hours: number, ratedHours: number): number {
  if (ratedHours <= 0) throw new RangeError('ratedHours must be positive');
  return hours / ratedHours;
}

const ORDER: Record<DueState, number> = { overdue: 0, 'due soon': 1, ok: 2, 'not planned': 3 };

/** Sorts a due list: overdue first, then by due date. */
export function byUrgency<T extends { forecast: Forecast }>(items: T[]): T[] {
  return [...items].sort((a, b) => ORDER[a.forecast.state] - ORDER[b.forecast.state] || (a.forecast.dueAt?.getTime() ?? Infinity) - (b.forecast.dueAt?.getTime() ?? Infinity));
}
