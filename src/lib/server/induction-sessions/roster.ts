/** The member's view of their sessions, and the instructor's roster: attendance and sign-off. */
import type { Knex } from 'knex';
import { db, transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { recordAudit } from '@lib/server/audit';
import { queueMail } from '@lib/server/mail';
import { clearanceOf } from '@lib/server/clearances/state';
import { signOffIn } from '@lib/server/clearances/transitions';
import { placeLabel, type SeatState, type SessionKind } from '@lib/induction';
import type { ClearanceLevel, ClearanceState } from '@lib/clearance-rules';
import { formatSessionTime, link, sessionQuery, sessionRow, type SessionRow, type SessionView, view } from './records';
import { offerFreedSeat, personRow } from './seats';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// The member's view (Clearances cards)

export interface MySessions {
  /** The next sessions of the group the person could book (at most three), with seats left. */
  upcoming: (SessionView & { seatsLeft: number; waiting: boolean })[];
  /** The person's live seat for this group, if any. */
  seat: { sessionId: string; seatId: string; startsAt: string; endsAt: string; place: string; kind: SessionKind; bring: string } | null;
}

export async function mySessions(personId: string, groupIds: string[], now = new Date()): Promise<Map<string, MySessions>> {
  const out = new Map<string, MySessions>();
  if (!groupIds.length) return out;
  const rows = (await sessionQuery(db()).whereIn('s.group_id', groupIds).where('s.state', 'published').where('s.starts_at', '>', now).orderBy('s.starts_at').limit(200)) as SessionRow[];
  const seats = await db()('induction_seats as x').join('induction_sessions as s', 's.id', 'x.session_id')
    .where({ 'x.person_id': personId, 'x.state': 'booked', 's.state': 'published' }).where('s.ends_at', '>', now)
    .select('x.id as seat_id', 's.id as session_id', 's.group_id');
  const waits = await db()('induction_waitlist').where({ person_id: personId, state: 'waiting' }).select('session_id');
  for (const g of groupIds) {
    const mine = seats.find((x) => x.group_id === g);
    const mineRow = mine ? rows.find((r) => r.id === mine.session_id) ?? (await sessionRow(db(), mine.session_id)) : null;
    out.set(g, {
      upcoming: rows.filter((r) => r.group_id === g).slice(0, 3).map((r) => ({ ...view(r), seatsLeft: Math.max(0, r.capacity - Number(r.seats_taken)), waiting: waits.some((w) => w.session_id === r.id) })),
      seat: mine && mineRow ? {
        sessionId: mineRow.id, seatId: mine.seat_id, startsAt: mineRow.starts_at.toISOString(), endsAt: mineRow.ends_at.toISOString(),
        place: placeLabel(mineRow.machine_name, mineRow.place), kind: mineRow.kind, bring: mineRow.bring,
      } : null,
    });
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// The roster (instructor)

export interface RosterEntry {
  seatId: string;
  personId: string;
  personName: string;
  personEmail: string;
  seatState: SeatState;
  clearanceState: ClearanceState;
  quiz: { passed: boolean; scorePct: number | null; submittedAt: string } | null;
  /** Earlier sessions this person was marked absent from. */
  noShows: number;
  signoff: { id: string; level: ClearanceLevel; signedAt: string } | null;
}

export interface Roster {
  session: SessionView;
  checklist: string[];
  entries: RosterEntry[];
  waiting: { personName: string; personEmail: string; since: string }[];
  counts: { booked: number; present: number; absent: number; signedOff: number };
}

export async function roster(sessionId: string, now = new Date()): Promise<Roster> {
  const q = db();
  const s = await sessionRow(q, sessionId);
  const group = await q('machine_groups').where({ id: s.group_id }).first('checklist');
  const seats = await q('induction_seats as x').join('people as p', 'p.id', 'x.person_id').leftJoin('signoffs as so', 'so.id', 'x.signoff_id')
    .where('x.session_id', sessionId).whereNot('x.state', 'cancelled').orderBy('p.name')
    .select('x.id', 'x.person_id', 'x.state', 'p.name', 'p.email', 'so.id as signoff_id', 'so.level as signoff_level', 'so.signed_at');
  const ids = seats.map((x) => x.person_id as string);
  const attempts = ids.length
    ? await q('quiz_attempts').whereIn('person_id', ids).where({ group_id: s.group_id }).whereNotNull('submitted_at').orderBy('submitted_at', 'desc').select('person_id', 'passed', 'score_pct', 'submitted_at')
    : [];
  const absences = ids.length
    ? await q('induction_seats').whereIn('person_id', ids).where({ state: 'absent' }).whereNot('session_id', sessionId).groupBy('person_id').select('person_id', q.raw('count(*)::int as n'))
    : [];
  const entries: RosterEntry[] = [];
  for (const x of seats) {
    const a = attempts.find((t) => t.person_id === x.person_id && t.passed) ?? attempts.find((t) => t.person_id === x.person_id);
    entries.push({
      seatId: x.id, personId: x.person_id, personName: x.name, personEmail: x.email, seatState: x.state,
      clearanceState: (await clearanceOf(x.person_id, s.group_id, now, q)).state,
      quiz: a ? { passed: Boolean(a.passed), scorePct: a.score_pct, submittedAt: a.submitted_at.toISOString() } : null,
      noShows: Number(absences.find((n) => n.person_id === x.person_id)?.n ?? 0),
      signoff: x.signoff_id ? { id: x.signoff_id, level: x.signoff_level, signedAt: x.signed_at.toISOString() } : null,
    });
  }
  const waiting = await q('induction_waitlist as w').join('people as p', 'p.id', 'w.person_id').where({ 'w.session_id': sessionId, 'w.state': 'waiting' }).orderBy('w.created_at').select('p.name', 'p.email', 'w.created_at');
  return {
    session: view(s),
    checklist: (group?.checklist as string[] | undefined) ?? [],
    entries,
    waiting: waiting.map((w) => ({ personName: w.name, personEmail: w.email, since: w.created_at.toISOString() })),
    counts: {
      booked: entries.length,
      present: entries.filter((e) => e.seatState === 'present').length,
      absent: entries.filter((e) => e.seatState === 'absent').length,
      signedOff: entries.filter((e) => e.signoff).length,
    },
  };
}

async function lockSeat(trx: Knex.Transaction, sessionId: string, personId: string) {
  const seat = await trx('induction_seats').where({ session_id: sessionId, person_id: personId }).whereNot('state', 'cancelled').forUpdate().first('id', 'state', 'signoff_id');
  if (!seat) throw new DomainError('not_found', 'not_on_roster', 'This person has no seat at this session.');
  return seat as { id: string; state: SeatState; signoff_id: string | null };
}

/** Marks a seat absent in the caller's transaction: the seat is released, the person told, and it counts as a no-show. */
async function markAbsent(trx: Knex.Transaction, instructorId: string, s: SessionRow, seatId: string, personId: string, now: Date): Promise<void> {
  await trx('induction_seats').where({ id: seatId }).update({ state: 'absent', marked_at: now, marked_by: instructorId });
  const person = await personRow(trx, personId);
  const site = await getSettings(trx);
  await recordAudit(trx, { actorId: instructorId, kind: 'induction.marked_absent', subjectType: 'induction_seat', subjectId: seatId, summary: `${person.name} marked absent from the ${s.group_name} session (no-show)` });
  await queueMail(trx, person.email, `We missed you at the ${s.group_name} induction`, {
    greeting: `Hello ${person.name},`,
    paragraphs: [
      `You were marked absent from the ${s.group_name} session on ${formatSessionTime(s.starts_at, s.ends_at, site)}, so your seat there is released.`,
      'Your quiz pass stands. Book a seat at another session from your Clearances screen — and if you cannot come, cancel the seat so someone else can have it.',
    ],
    action: { label: 'Book another session', url: link('/clearances') },
  });
  await offerFreedSeat(trx, s.id, now, site);
}

/** Attendance on the roster: present, or absent (seat released, person told, counted as a no-show). */
export async function markAttendance(instructorId: string, sessionId: string, personId: string, present: boolean, now = new Date()): Promise<{ seatId: string; state: SeatState }> {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, sessionId, true);
    if (s.state === 'cancelled') throw new DomainError('conflict', 'session_cancelled', 'This session was cancelled.');
    const seat = await lockSeat(trx, sessionId, personId);
    if (seat.signoff_id) throw new DomainError('conflict', 'already_signed_off', 'This person is already signed off from this session.');
    const want: SeatState = present ? 'present' : 'absent';
    if (seat.state === want) return { seatId: seat.id, state: want };
    if (present) {
      await trx('induction_seats').where({ id: seat.id }).update({ state: 'present', marked_at: now, marked_by: instructorId });
      await recordAudit(trx, { actorId: instructorId, kind: 'induction.marked_present', subjectType: 'induction_seat', subjectId: seat.id, summary: `Marked present at the ${s.group_name} session` });
    } else {
      await markAbsent(trx, instructorId, s, seat.id, personId, now);
    }
    return { seatId: seat.id, state: want };
  });
}

export interface RosterSignOffInput {
  personId: string;
  present: boolean;
  checklist: Record<string, boolean>;
  level: ClearanceLevel;
  notes: string;
}

/**
 * The roster's one step per person: marks them present and records the same sign-off as the walk-in path
 * (level, notes, expiry; every checklist item must be ticked) — the clearance becomes `cleared`. With
 * `present: false` the seat is marked absent instead and no sign-off is made.
 */
export async function signOffFromRoster(instructorId: string, sessionId: string, input: RosterSignOffInput, now = new Date()) {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, sessionId, true);
    if (s.state === 'cancelled') throw new DomainError('conflict', 'session_cancelled', 'This session was cancelled.');
    const seat = await lockSeat(trx, sessionId, input.personId);
    if (seat.signoff_id) throw new DomainError('conflict', 'already_signed_off', 'This person is already signed off from this session.');
    if (!input.present) {
      if (seat.state !== 'absent') await markAbsent(trx, instructorId, s, seat.id, input.personId, now);
      return { signedOff: false as const, seatId: seat.id, seatState: 'absent' as SeatState };
    }
    const group = await trx('machine_groups').where({ id: s.group_id }).first('checklist');
    const items = (group?.checklist as string[] | undefined) ?? [];
    const result = await signOffIn(trx, instructorId, {
      personId: input.personId, groupId: s.group_id, level: input.level, notes: input.notes,
      checklist: items.map((item) => ({ item, done: input.checklist[item] === true })),
    }, now);
    await trx('induction_seats').where({ id: seat.id }).update({ state: 'present', marked_at: now, marked_by: instructorId, signoff_id: result.signoffId });
    return { signedOff: true as const, seatId: seat.id, seatState: 'present' as SeatState, ...result };
  });
}
