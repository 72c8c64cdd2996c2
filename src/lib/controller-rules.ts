/**
 * The controller at a machine (badge reader + relay on the enable line): what its answers mean, the words a small
 * display shows, and the arithmetic of measured beam time. Pure: no I/O, no clock.
 */

/** Characters per line of the display the messages are written for. */
export const DISPLAY_WIDTH = 32;

/** Why a badge may not fire the machine now, in the order the checks run. */
export const DENY_REASONS = [
  'unknown_badge',
  'inactive',
  'machine_out_of_service',
  'suspended',
  'not_cleared',
  'outside_hours',
  'no_booking',
] as const;
export type DenyReason = (typeof DENY_REASONS)[number];

/** At most DISPLAY_WIDTH characters: one line of a small character display. */
export const DENY_MESSAGES: Record<DenyReason, string> = {
  unknown_badge: 'Badge not known. See a steward.',
  inactive: 'Account not active.',
  machine_out_of_service: 'Out of service. Do not use.',
  suspended: 'Clearance suspended.',
  not_cleared: 'Not cleared for this machine.',
  outside_hours: 'Closed now. See opening hours.',
  no_booking: 'No booking now. Book first.',
};

/** Why the relay is open (`cut`). `idle`: nobody is checked in. */
export const CUT_REASONS = ['idle', 'machine_out_of_service', 'suspended', 'not_cleared', 'inactive', 'booking_ended', 'controller_revoked'] as const;
export type CutReason = (typeof CUT_REASONS)[number];

export const CUT_MESSAGES: Record<CutReason, string> = {
  idle: 'Badge in to start.',
  machine_out_of_service: 'Out of service. Power cut.',
  suspended: 'Clearance suspended. Power cut.',
  not_cleared: 'Clearance not valid. Power cut.',
  inactive: 'Account not active. Power cut.',
  booking_ended: 'Booking over. Power cut.',
  controller_revoked: 'Controller revoked.',
};

/** Minutes after a session's end time before the relay opens: time to finish the pass in progress, not a new job. */
export const CONTROLLER_GRACE_MINUTES = 5;
/** A controller not heard from for this long while its machine is booked is reported to the stewards. */
export const CONTROLLER_OFFLINE_MINUTES = 2;
/** Unknown badges stay in the stewards' list this long. */
export const UNKNOWN_BADGE_LIST_MINUTES = 60;
/** The longest long-poll the server holds open, in seconds. */
export const MAX_WAIT_SECONDS = 30;
/** A walk-up session is at most this long (and ends at the next booking or at closing, whichever is first). */
export const WALK_UP_MAX_MINUTES = 120;

/**
 * Billable minutes of a session: measured beam seconds when a controller reported them (a started minute counts),
 * else the wall clock from check-in to check-out (rounded to the nearest minute, as at the phone).
 */
export function billableMinutes(checkedInAt: Date, checkedOutAt: Date, measuredSeconds: number | null | undefined): { minutes: number; source: 'measured' | 'clock' } {
  if (measuredSeconds !== null && measuredSeconds !== undefined && Number.isFinite(measuredSeconds) && measuredSeconds >= 0) {
    return { minutes: Math.ceil(measuredSeconds / 60), source: 'measured' };
  }
  return { minutes: Math.max(0, Math.round((checkedOutAt.getTime() - checkedInAt.getTime()) / 60_000)), source: 'clock' };
}

/** A reader's UID as stored: trimmed, separators (spaces, colons, dashes) removed, upper case. */
export function normaliseBadge(raw: string): string {
  return raw.trim().replace(/[\s:-]/g, '').toUpperCase();
}

/** The part of a badge a person may see: its last four characters. */
export function badgeHint(normalised: string): string {
  return normalised.slice(-4);
}

export interface StateFacts {
  machineOutOfService: boolean;
  session: null | {
    endsAt: Date;
    personActive: boolean;
    clearance: { ok: true } | { ok: false; state: string };
  };
}

export type ControllerState = { state: 'enabled'; until: Date } | { state: 'cut'; reason: CutReason; message: string };

/** The state a controller should be in at `now`, from the facts about its machine. */
export function decideState(f: StateFacts, now: Date, graceMinutes = CONTROLLER_GRACE_MINUTES): ControllerState {
  const cut = (reason: CutReason): ControllerState => ({ state: 'cut', reason, message: CUT_MESSAGES[reason] });
  if (f.machineOutOfService) return cut('machine_out_of_service');
  const s = f.session;
  if (!s) return cut('idle');
  if (!s.personActive) return cut('inactive');
  if (!s.clearance.ok) return cut(s.clearance.state === 'suspended' ? 'suspended' : 'not_cleared');
  if (now.getTime() >= s.endsAt.getTime() + graceMinutes * 60_000) return cut('booking_ended');
  return { state: 'enabled', until: s.endsAt };
}

/** When the state computed now stops being true by the clock alone (the end plus grace), or null. */
export function stateDeadline(f: StateFacts, graceMinutes = CONTROLLER_GRACE_MINUTES): Date | null {
  return f.session ? new Date(f.session.endsAt.getTime() + graceMinutes * 60_000) : null;
}
