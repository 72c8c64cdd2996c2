/**
 * Induction sessions: the vocabulary, the input schemas shared by the API and the islands, and who may
 * book a seat (with the reason when not). Pure (no I/O); the SQL is in src/lib/server/induction-sessions/.
 */
import { z } from '@lib/zod';
import type { ClearanceState } from './clearance-rules';
import { LEVELS } from './clearance-rules';

export const SESSION_KINDS = ['first', 'refresher'] as const;
export type SessionKind = (typeof SESSION_KINDS)[number];
export const SESSION_KIND_LABELS: Record<SessionKind, string> = { first: 'First induction', refresher: 'Refresher' };

export const SEAT_STATES = ['booked', 'present', 'absent', 'cancelled'] as const;
export type SeatState = (typeof SEAT_STATES)[number];
/** Seats that hold a place against the capacity. */
export const HOLDING_SEAT_STATES: SeatState[] = ['booked', 'present'];

export const DEFAULT_CAPACITY = 4;

const instant = z.iso.datetime({ offset: true, error: 'Use an ISO 8601 date and time with an offset, e.g. 2026-12-02T09:00:00+13:00.' }).transform((s) => new Date(s));

export const sessionInput = z
  .object({
    groupId: z.uuid('Choose a machine group.'),
    kind: z.enum(SESSION_KINDS, { error: 'The kind is first or refresher.' }).default('first'),
    startsAt: instant,
    endsAt: instant,
    machineId: z.uuid('Not a valid machine id.').nullable().default(null),
    place: z.string().trim().max(120, 'Use at most 120 characters.').default(''),
    capacity: z.number().int('Use a whole number.').min(1, 'At least one seat.').max(50, 'At most 50 seats.').default(DEFAULT_CAPACITY),
    bring: z.string().trim().max(500, 'Use at most 500 characters.').default(''),
  })
  .strict()
  .superRefine((v, ctx) => {
    if (v.startsAt instanceof Date && v.endsAt instanceof Date && v.endsAt <= v.startsAt) ctx.addIssue({ code: 'custom', path: ['endsAt'], message: 'The end must be after the start.' });
    if (!v.machineId && !v.place) ctx.addIssue({ code: 'custom', path: ['place'], message: 'Choose a machine or name the room.' });
  });
export type SessionInput = z.infer<typeof sessionInput>;

/** The roster's sign-off: attendance, the practical checklist as ticked, the level and notes. */
export const rosterSignoffInput = z
  .object({
    personId: z.uuid('Not a valid person id.'),
    present: z.boolean({ error: 'Say whether the person was present.' }),
    checklist: z.record(z.string().trim().min(1).max(200), z.boolean()).refine((c) => Object.keys(c).length <= 50, 'At most 50 items.').default({}),
    level: z.enum(LEVELS).default('basic'),
    notes: z.string().trim().max(2000, 'Use at most 2000 characters.').default(''),
  })
  .strict();

export const attendanceInput = z.object({ personId: z.uuid('Not a valid person id.'), present: z.boolean({ error: 'Say whether the person was present.' }) }).strict();

export interface SeatEligibilityInput {
  kind: SessionKind;
  groupName: string;
  state: ClearanceState;
  /** For a cleared clearance: the last valid day, already formatted. */
  clearedUntil?: string | null;
  suspendedReason?: string | null;
  /** Another live seat for this group, formatted ("Tue 8 Dec, 10:00"). */
  otherSeatOn?: string | null;
}

export type SeatEligibility = { ok: true } | { ok: false; reason: string };

/**
 * May a person with this clearance book a seat? First inductions take people whose quiz is passed
 * (`awaiting sign-off`); refreshers also take `lapsed` clearances. One live seat per group at a time.
 */
export function seatEligibility(i: SeatEligibilityInput): SeatEligibility {
  const g = i.groupName.toLowerCase();
  if (i.otherSeatOn) return { ok: false, reason: `You already have a seat at the ${g} session on ${i.otherSeatOn}; cancel that one first to change sessions.` };
  switch (i.state) {
    case 'awaiting sign-off':
      return { ok: true };
    case 'lapsed':
      return i.kind === 'refresher'
        ? { ok: true }
        : { ok: false, reason: `Your ${g} clearance has lapsed: book a refresher session (or pass the refresher quiz first), not a first induction.` };
    case 'quiz due':
      return { ok: false, reason: `Pass the ${g} quiz first: a seat at a practical session opens once the quiz is passed.` };
    case 'cleared':
      return { ok: false, reason: `You are already cleared on the ${g}${i.clearedUntil ? ` until the end of ${i.clearedUntil}` : ''}; no session is needed.` };
    case 'suspended':
      return { ok: false, reason: `Your ${g} clearance is suspended${i.suspendedReason ? ` (“${i.suspendedReason}”)` : ''}; ask an instructor about reinstating it.` };
  }
}

/** The place a session is held, as people read it. */
export function placeLabel(machineName: string | null, place: string): string {
  if (machineName && place) return `${machineName} — ${place}`;
  return machineName ?? place;
}
