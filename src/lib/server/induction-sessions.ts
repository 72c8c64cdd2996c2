/**
 * Induction sessions: all SQL of sessions, seats and their waitlist. An instructor publishes a session for a
 * machine group (its machine time is a class block, so nobody books the machine over it); members whose quiz is
 * passed book a seat; the instructor marks attendance and signs people off from the roster.
 *
 * Capacity is held in the database: a seat is taken with the session row locked FOR UPDATE, so concurrent
 * requests for the last seat are answered one after another (one 201, the rest 409 session_full).
 */
import { DEFAULT_LOCALE, siteFormat } from '../format';
import type { Knex } from 'knex';
import { db, transaction } from './db';
import { HttpError } from './errors';
import { recordAudit } from './audit';
import { queueMail } from './mail';
import { env } from './env';
import { clearanceOf, signOffIn } from './clearances';
import { releaseClassTime, reserveClassTime } from './bookings';
import { buildIcs } from '../ics';
import {
  HOLDING_SEAT_STATES, SESSION_KIND_LABELS, placeLabel, seatEligibility,
  type SeatState, type SessionInput, type SessionKind,
} from '../induction';
import type { ClearanceLevel, ClearanceState } from '../clearance-rules';

type Q = Knex | Knex.Transaction;

export interface SessionView {
  id: string;
  groupId: string;
  groupName: string;
  startsAt: string;
  endsAt: string;
  capacity: number;
  seatsTaken: number;
  kind: SessionKind;
  place: string;
  machineId: string | null;
  bring: string;
  instructorName: string;
  state: 'published' | 'cancelled';
}

interface SessionRow {
  id: string; group_id: string; group_name: string; kind: SessionKind; starts_at: Date; ends_at: Date; machine_id: string | null;
  machine_name: string | null; place: string; capacity: number; bring: string; instructor_id: string; instructor_name: string;
  booking_id: string | null; state: 'published' | 'cancelled'; seats_taken: number;
}

const SAFETY = 'Class 4 laser: wear closed shoes, tie back long hair, and follow the instructor. Your laser safety officer and the manufacturer’s manual take precedence.';
const link = (path: string) => new URL(path, env().PUBLIC_BASE_URL).toString();

function sessionQuery(q: Q) {
  return q('induction_sessions as s')
    .join('machine_groups as g', 'g.id', 's.group_id')
    .join('people as i', 'i.id', 's.instructor_id')
    .leftJoin('machines as m', 'm.id', 's.machine_id')
    .select(
      's.*', 'g.name as group_name', 'i.name as instructor_name', 'm.name as machine_name',
      q.raw(`(SELECT count(*) FROM induction_seats x WHERE x.session_id = s.id AND x.state IN ('booked', 'present'))::int AS seats_taken`),
    );
}

function view(r: SessionRow): SessionView {
  return {
    id: r.id, groupId: r.group_id, groupName: r.group_name, startsAt: r.starts_at.toISOString(), endsAt: r.ends_at.toISOString(),
    capacity: r.capacity, seatsTaken: Number(r.seats_taken), kind: r.kind, place: placeLabel(r.machine_name, r.place), machineId: r.machine_id,
    bring: r.bring, instructorName: r.instructor_name, state: r.state,
  };
}

async function siteInfo(q: Q): Promise<{ name: string; timeZone: string; locale: string }> {
  const row = await q('site_settings').where({ id: 1 }).first('name', 'time_zone', 'locale');
  return row ? { name: row.name, timeZone: row.time_zone, locale: row.locale } : { name: 'Beamwarden', timeZone: 'UTC', locale: DEFAULT_LOCALE };
}

/** "Tuesday, 8 December 2026, 10:00–12:00" in the site's zone and locale. */
export function formatSessionTime(startsAt: Date, endsAt: Date, site: { timeZone: string; locale: string }): string {
  return siteFormat(site.locale, site.timeZone).longRange(startsAt, endsAt);
}

// ---------------------------------------------------------------------------------------------
// Reading

export async function listSessions(filter: { groupId?: string; from?: Date; to?: Date; includeCancelled?: boolean }): Promise<SessionView[]> {
  const q = sessionQuery(db());
  if (filter.groupId) q.where('s.group_id', filter.groupId);
  if (filter.from) q.where('s.ends_at', '>', filter.from);
  if (filter.to) q.where('s.starts_at', '<', filter.to);
  if (!filter.includeCancelled) q.where('s.state', 'published');
  const rows = (await q.orderBy('s.starts_at').limit(500)) as SessionRow[];
  return rows.map(view);
}

async function sessionRow(q: Q, id: string, lock = false): Promise<SessionRow> {
  if (lock) await q('induction_sessions').where({ id }).forUpdate().first('id');
  const r = (await sessionQuery(q).where('s.id', id).first()) as SessionRow | undefined;
  if (!r) throw new HttpError(404, 'not_found', 'No such induction session.');
  return r;
}

export async function getSession(id: string): Promise<SessionView> {
  return view(await sessionRow(db(), id));
}

// ---------------------------------------------------------------------------------------------
// Publishing

export async function createSession(actorId: string, input: SessionInput, now = new Date()): Promise<SessionView> {
  return transaction(async (trx) => {
    const group = await trx('machine_groups').where({ id: input.groupId }).first('id', 'name');
    if (!group) throw new HttpError(422, 'invalid', 'Some fields are not valid; see fields.', { groupId: 'No such machine group.' });
    if (input.startsAt <= now) throw new HttpError(422, 'invalid', 'Some fields are not valid; see fields.', { startsAt: 'Choose a time in the future.' });
    let machineName: string | null = null;
    if (input.machineId) {
      const m = await trx('machines').where({ id: input.machineId }).whereNull('retired_at').first('id', 'name', 'group_id');
      if (!m) throw new HttpError(422, 'invalid', 'Some fields are not valid; see fields.', { machineId: 'No such machine.' });
      if (m.group_id !== group.id) throw new HttpError(422, 'invalid', 'Some fields are not valid; see fields.', { machineId: `${m.name} is not in the ${group.name} group.` });
      machineName = m.name;
    }
    const [row] = await trx('induction_sessions').insert({
      group_id: group.id, kind: input.kind, starts_at: input.startsAt, ends_at: input.endsAt, machine_id: input.machineId,
      place: input.place, capacity: input.capacity, bring: input.bring, instructor_id: actorId,
    }).returning('id');
    if (input.machineId) {
      const booking = await reserveClassTime(trx, actorId, {
        machineId: input.machineId, startsAt: input.startsAt, endsAt: input.endsAt,
        courseName: `${SESSION_KIND_LABELS[input.kind]}: ${group.name}`, notes: 'Induction session (practical sign-off)',
      }, now);
      await trx('induction_sessions').where({ id: row.id }).update({ booking_id: booking.id });
    }
    await recordAudit(trx, {
      actorId, kind: 'induction.session_published', subjectType: 'induction_session', subjectId: row.id,
      summary: `Published a ${SESSION_KIND_LABELS[input.kind].toLowerCase()} session for ${group.name} at ${placeLabel(machineName, input.place)} (${input.capacity} seats)`,
      after: { ...input, startsAt: input.startsAt.toISOString(), endsAt: input.endsAt.toISOString() },
    });
    return view(await sessionRow(trx, row.id));
  });
}

/** Cancels a session: its seats are cancelled and the people e-mailed (with a cancelled .ics); its machine time is released. */
export async function cancelSession(actorId: string, id: string, reason: string, now = new Date()): Promise<SessionView> {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, id, true);
    if (s.state === 'cancelled') throw new HttpError(409, 'session_cancelled', 'This session is already cancelled.');
    if (s.starts_at <= now) throw new HttpError(409, 'session_started', 'This session has started; mark attendance on the roster instead.');
    await trx('induction_sessions').where({ id }).update({ state: 'cancelled', cancelled_at: now, updated_at: now });
    if (s.booking_id) await releaseClassTime(trx, actorId, s.booking_id, now);
    const seats = await trx('induction_seats as x').join('people as p', 'p.id', 'x.person_id').where({ 'x.session_id': id, 'x.state': 'booked' }).select('x.id', 'p.email', 'p.name');
    await trx('induction_seats').where({ session_id: id, state: 'booked' }).update({ state: 'cancelled', cancelled_at: now });
    await trx('induction_waitlist').where({ session_id: id, state: 'waiting' }).update({ state: 'withdrawn' });
    const site = await siteInfo(trx);
    for (const seat of seats) {
      await queueMail(trx, seat.email, `Induction session cancelled: ${s.group_name}, ${formatSessionTime(s.starts_at, s.ends_at, site)}`, {
        greeting: `Hello ${seat.name},`,
        paragraphs: [`The ${s.group_name} induction session on ${formatSessionTime(s.starts_at, s.ends_at, site)} is cancelled: ${reason}`, 'Your quiz pass stands. Book a seat at another session from your Clearances screen.'],
        action: { label: 'See the next sessions', url: link('/clearances') },
      }, [icsAttachment(s, seat.id, site, true)]);
    }
    await recordAudit(trx, { actorId, kind: 'induction.session_cancelled', subjectType: 'induction_session', subjectId: id, summary: `Cancelled the ${s.group_name} session: ${reason}`, after: { seatsCancelled: seats.length } });
    return view(await sessionRow(trx, id));
  });
}

// ---------------------------------------------------------------------------------------------
// Seats

function icsAttachment(s: SessionRow, seatId: string, site: { name: string; timeZone: string; locale: string }, cancelled = false) {
  const ics = buildIcs(`${site.name} induction`, [{
    id: `seat-${seatId}`,
    startsAt: s.starts_at,
    endsAt: s.ends_at,
    summary: `${SESSION_KIND_LABELS[s.kind]}: ${s.group_name}`,
    description: `Practical sign-off with ${s.instructor_name}.${s.bring ? ` Bring: ${s.bring}.` : ''} ${SAFETY}`,
    location: `${placeLabel(s.machine_name, s.place)}, ${site.name}`,
    cancelled,
    url: link('/clearances'),
  }], { method: 'publish' });
  return { filename: 'induction.ics', contentType: 'text/calendar; charset=utf-8; method=PUBLISH', content: Buffer.from(ics, 'utf8').toString('base64') };
}

async function personRow(q: Q, id: string): Promise<{ id: string; email: string; name: string }> {
  const p = await q('people').where({ id, active: true }).first('id', 'email', 'name');
  if (!p) throw new HttpError(404, 'not_found', 'No such person.');
  return p;
}

/** Why this person may not take a seat at this session now, or null when they may. */
async function refusal(trx: Q, personId: string, s: SessionRow, now: Date, site: { timeZone: string; locale: string }): Promise<string | null> {
  const c = await clearanceOf(personId, s.group_id, now, trx);
  const other = await trx('induction_seats as x').join('induction_sessions as s', 's.id', 'x.session_id')
    .where({ 'x.person_id': personId, 's.group_id': s.group_id, 'x.state': 'booked', 's.state': 'published' })
    .whereNot('s.id', s.id).where('s.ends_at', '>', now).first('s.starts_at', 's.ends_at');
  const r = seatEligibility({
    kind: s.kind, groupName: s.group_name, state: c.state, clearedUntil: c.expiresOn, suspendedReason: c.suspendedReason,
    otherSeatOn: other ? formatSessionTime(other.starts_at, other.ends_at, site) : null,
  });
  return r.ok ? null : r.reason;
}

function assertOpen(s: SessionRow, now: Date): void {
  if (s.state === 'cancelled') throw new HttpError(409, 'session_cancelled', 'This session was cancelled; choose another.');
  if (s.starts_at <= now) throw new HttpError(409, 'session_started', 'This session has already started; choose a later one.');
}

/** Books a seat for `personId`: eligible (403 not_eligible with the reason), not full (409 session_full), one live seat per session. */
export async function bookSeat(personId: string, sessionId: string, now = new Date()): Promise<{ seatId: string; session: SessionView }> {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, sessionId, true);
    assertOpen(s, now);
    await trx.raw("SELECT pg_advisory_xact_lock(hashtextextended('induction.person:' || ? || ':' || ?, 0))", [personId, s.group_id]);
    const mine = await trx('induction_seats').where({ session_id: s.id, person_id: personId }).whereNot('state', 'cancelled').first('id');
    if (mine) throw new HttpError(409, 'already_booked', 'You already have a seat at this session.');
    const site = await siteInfo(trx);
    const why = await refusal(trx, personId, s, now, site);
    if (why) throw new HttpError(403, 'not_eligible', why, { reason: why });
    if (Number(s.seats_taken) >= s.capacity) {
      throw new HttpError(409, 'session_full', `All ${s.capacity} seats are taken. Join the waitlist and you will be e-mailed if a seat frees up, or choose another session.`);
    }
    const seat = await insertSeat(trx, s, personId, now, site);
    return { seatId: seat, session: view(await sessionRow(trx, s.id)) };
  });
}

async function insertSeat(trx: Knex.Transaction, s: SessionRow, personId: string, now: Date, site: { name: string; timeZone: string; locale: string }, fromWaitlist = false): Promise<string> {
  const person = await personRow(trx, personId);
  const [seat] = await trx('induction_seats').insert({ session_id: s.id, person_id: personId, state: 'booked', booked_at: now }).returning('id');
  await trx('induction_waitlist').where({ session_id: s.id, person_id: personId, state: 'waiting' }).update({ state: 'seated', seat_id: seat.id, offered_at: now });
  await recordAudit(trx, {
    actorId: personId, kind: 'induction.seat_booked', subjectType: 'induction_seat', subjectId: seat.id,
    summary: `${person.name} took a seat at the ${s.group_name} session${fromWaitlist ? ' (from the waitlist)' : ''}`,
  });
  const when = formatSessionTime(s.starts_at, s.ends_at, site);
  await queueMail(trx, person.email, `${fromWaitlist ? 'A seat freed up for you' : 'Seat booked'}: ${s.group_name} induction, ${when}`, {
    greeting: `Hello ${person.name},`,
    paragraphs: [
      fromWaitlist
        ? `A seat freed up at the ${s.group_name} ${SESSION_KIND_LABELS[s.kind].toLowerCase()} session you were waiting for, and it is now yours: ${when} (${site.timeZone}), at ${placeLabel(s.machine_name, s.place)}.`
        : `Your seat is booked at the ${s.group_name} ${SESSION_KIND_LABELS[s.kind].toLowerCase()} session: ${when} (${site.timeZone}), at ${placeLabel(s.machine_name, s.place)}, with ${s.instructor_name}.`,
      s.bring ? `Bring: ${s.bring}.` : 'Bring a small test piece of an allowed material.',
      fromWaitlist ? 'If you can no longer come, cancel the seat on your Clearances screen so the next person gets it.' : 'If you cannot come, cancel the seat on your Clearances screen so someone else can have it.',
      'The attached calendar file adds the session to your calendar.',
    ],
    action: { label: 'See your clearances', url: link('/clearances') },
    footnote: SAFETY,
  }, [icsAttachment(s, seat.id, site)]);
  return seat.id as string;
}

/** Cancels the person's own seat; the freed seat goes to the first eligible person on the waitlist (e-mailed). */
export async function cancelMySeat(personId: string, sessionId: string, now = new Date()): Promise<{ seatId: string; state: SeatState; offeredTo: string | null }> {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, sessionId, true);
    const seat = await trx('induction_seats').where({ session_id: s.id, person_id: personId, state: 'booked' }).forUpdate().first('id');
    if (!seat) {
      const waiting = await trx('induction_waitlist').where({ session_id: s.id, person_id: personId, state: 'waiting' }).first('id');
      if (waiting) {
        await trx('induction_waitlist').where({ id: waiting.id }).update({ state: 'withdrawn' });
        return { seatId: waiting.id as string, state: 'cancelled' as SeatState, offeredTo: null };
      }
      throw new HttpError(404, 'not_found', 'You have no seat at this session.');
    }
    if (s.starts_at <= now) throw new HttpError(409, 'session_started', 'This session has started; tell the instructor if you cannot stay.');
    await trx('induction_seats').where({ id: seat.id }).update({ state: 'cancelled', cancelled_at: now });
    const person = await personRow(trx, personId);
    const site = await siteInfo(trx);
    await recordAudit(trx, { actorId: personId, kind: 'induction.seat_cancelled', subjectType: 'induction_seat', subjectId: seat.id, summary: `${person.name} cancelled a seat at the ${s.group_name} session` });
    await queueMail(trx, person.email, `Seat cancelled: ${s.group_name} induction, ${formatSessionTime(s.starts_at, s.ends_at, site)}`, {
      greeting: `Hello ${person.name},`,
      paragraphs: [`Your seat at the ${s.group_name} session on ${formatSessionTime(s.starts_at, s.ends_at, site)} is cancelled. Your quiz pass stands: book another session when it suits you.`],
      action: { label: 'See the next sessions', url: link('/clearances') },
    }, [icsAttachment(s, seat.id, site, true)]);
    const offeredTo = await offerFreedSeat(trx, s.id, now, site);
    return { seatId: seat.id as string, state: 'cancelled' as SeatState, offeredTo };
  });
}

/** A seat has freed up: the first person waiting who is still eligible gets it, with an e-mail. Caller's transaction, session locked. */
async function offerFreedSeat(trx: Knex.Transaction, sessionId: string, now: Date, site: { name: string; timeZone: string; locale: string }): Promise<string | null> {
  const s = await sessionRow(trx, sessionId);
  if (s.state !== 'published' || s.starts_at <= now || Number(s.seats_taken) >= s.capacity) return null;
  const waiting = await trx('induction_waitlist').where({ session_id: sessionId, state: 'waiting' }).orderBy('created_at').forUpdate().select('id', 'person_id');
  for (const w of waiting) {
    const active = await trx('people').where({ id: w.person_id, active: true }).first('id');
    if (!active || (await refusal(trx, w.person_id, s, now, site))) {
      await trx('induction_waitlist').where({ id: w.id }).update({ state: 'withdrawn' });
      continue;
    }
    await insertSeat(trx, s, w.person_id, now, site, true);
    return w.person_id as string;
  }
  return null;
}

/** Joins the waitlist of a full session (409 seats_free when a seat can simply be booked). */
export async function joinSessionWaitlist(personId: string, sessionId: string, now = new Date()): Promise<{ waitlistId: string; position: number }> {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, sessionId, true);
    assertOpen(s, now);
    const site = await siteInfo(trx);
    const why = await refusal(trx, personId, s, now, site);
    if (why) throw new HttpError(403, 'not_eligible', why, { reason: why });
    if (await trx('induction_seats').where({ session_id: s.id, person_id: personId }).whereNot('state', 'cancelled').first('id')) {
      throw new HttpError(409, 'already_booked', 'You already have a seat at this session.');
    }
    if (Number(s.seats_taken) < s.capacity) throw new HttpError(409, 'seats_free', 'There are free seats: book one instead of waiting.');
    if (await trx('induction_waitlist').where({ session_id: s.id, person_id: personId, state: 'waiting' }).first('id')) {
      throw new HttpError(409, 'already_waiting', 'You are already on the waitlist for this session.');
    }
    const [w] = await trx('induction_waitlist').insert({ session_id: s.id, person_id: personId }).returning('id');
    const position = Number((await trx('induction_waitlist').where({ session_id: s.id, state: 'waiting' }).count<{ n: number }[]>('* as n'))[0]?.n ?? 1);
    await recordAudit(trx, { actorId: personId, kind: 'induction.waitlist_joined', subjectType: 'induction_session', subjectId: s.id, summary: `Joined the waitlist of the ${s.group_name} session` });
    return { waitlistId: w.id as string, position };
  });
}

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
  if (!seat) throw new HttpError(404, 'not_on_roster', 'This person has no seat at this session.');
  return seat as { id: string; state: SeatState; signoff_id: string | null };
}

/** Marks a seat absent in the caller's transaction: the seat is released, the person told, and it counts as a no-show. */
async function markAbsent(trx: Knex.Transaction, instructorId: string, s: SessionRow, seatId: string, personId: string, now: Date): Promise<void> {
  await trx('induction_seats').where({ id: seatId }).update({ state: 'absent', marked_at: now, marked_by: instructorId });
  const person = await personRow(trx, personId);
  const site = await siteInfo(trx);
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
    if (s.state === 'cancelled') throw new HttpError(409, 'session_cancelled', 'This session was cancelled.');
    const seat = await lockSeat(trx, sessionId, personId);
    if (seat.signoff_id) throw new HttpError(409, 'already_signed_off', 'This person is already signed off from this session.');
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
    if (s.state === 'cancelled') throw new HttpError(409, 'session_cancelled', 'This session was cancelled.');
    const seat = await lockSeat(trx, sessionId, input.personId);
    if (seat.signoff_id) throw new HttpError(409, 'already_signed_off', 'This person is already signed off from this session.');
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

// ---------------------------------------------------------------------------------------------
// Timed work

/** The day-before reminder: one e-mail per booked seat for sessions starting in the next 24 hours. */
export async function remindSeats(now = new Date()): Promise<{ reminded: number }> {
  return transaction(async (trx) => {
    const due = await trx('induction_seats as x').join('induction_sessions as s', 's.id', 'x.session_id')
      .where({ 'x.state': 'booked', 's.state': 'published' }).whereNull('x.reminded_at')
      .where('s.starts_at', '>', now).where('s.starts_at', '<=', new Date(now.getTime() + 24 * 3_600_000))
      .forUpdate('x').skipLocked().select('x.id', 'x.person_id', 'x.session_id');
    const site = await siteInfo(trx);
    for (const d of due) {
      const s = await sessionRow(trx, d.session_id);
      const person = await trx('people').where({ id: d.person_id }).first('email', 'name', 'active');
      await trx('induction_seats').where({ id: d.id }).update({ reminded_at: now });
      if (!person?.active) continue;
      await queueMail(trx, person.email, `Tomorrow: ${s.group_name} induction, ${formatSessionTime(s.starts_at, s.ends_at, site)}`, {
        greeting: `Hello ${person.name},`,
        paragraphs: [
          `A reminder of your seat at the ${s.group_name} session: ${formatSessionTime(s.starts_at, s.ends_at, site)}, at ${placeLabel(s.machine_name, s.place)}, with ${s.instructor_name}.`,
          s.bring ? `Bring: ${s.bring}.` : 'Bring a small test piece of an allowed material.',
          'If you cannot come, cancel the seat on your Clearances screen so someone else can have it.',
        ],
        action: { label: 'See your clearances', url: link('/clearances') },
        footnote: SAFETY,
      }, [icsAttachment(s, d.id, site)]);
    }
    return { reminded: due.length };
  });
}
