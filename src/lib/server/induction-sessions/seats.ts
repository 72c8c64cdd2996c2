/**
 * Seats and their waitlist. Capacity is held in the database: a seat is taken with the session row locked FOR UPDATE,
 * so concurrent requests for the last seat are answered one after another (one 201, the rest 409 session_full).
 */
import type { Knex } from 'knex';
import { transaction, type Conn } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { recordAudit } from '@lib/server/audit';
import { queueMail } from '@lib/server/mail';
import { clearanceOf } from '@lib/server/clearances/state';
import { buildIcs } from '@lib/ics';
import { SESSION_KIND_LABELS, placeLabel, seatEligibility, type SeatState } from '@lib/induction';
import { formatSessionTime, link, SAFETY, sessionRow, type SessionRow, type SessionView, view } from './records';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Seats

export function icsAttachment(s: SessionRow, seatId: string, site: { name: string; timeZone: string; locale: string }, cancelled = false) {
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

export async function personRow(q: Conn, id: string): Promise<{ id: string; email: string; name: string }> {
  const p = await q('people').where({ id, active: true }).first('id', 'email', 'name');
  if (!p) throw new DomainError('not_found', 'not_found', 'No such person.');
  return p;
}

/** Why this person may not take a seat at this session now, or null when they may. */
async function refusal(trx: Conn, personId: string, s: SessionRow, now: Date, site: { timeZone: string; locale: string }): Promise<string | null> {
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
  if (s.state === 'cancelled') throw new DomainError('conflict', 'session_cancelled', 'This session was cancelled; choose another.');
  if (s.starts_at <= now) throw new DomainError('conflict', 'session_started', 'This session has already started; choose a later one.');
}

/** Books a seat for `personId`: eligible (403 not_eligible with the reason), not full (409 session_full), one live seat per session. */
export async function bookSeat(personId: string, sessionId: string, now = new Date()): Promise<{ seatId: string; session: SessionView }> {
  return transaction(async (trx) => {
    const s = await sessionRow(trx, sessionId, true);
    assertOpen(s, now);
    await trx.raw("SELECT pg_advisory_xact_lock(hashtextextended('induction.person:' || ? || ':' || ?, 0))", [personId, s.group_id]);
    const mine = await trx('induction_seats').where({ session_id: s.id, person_id: personId }).whereNot('state', 'cancelled').first('id');
    if (mine) throw new DomainError('conflict', 'already_booked', 'You already have a seat at this session.');
    const site = await getSettings(trx);
    const why = await refusal(trx, personId, s, now, site);
    if (why) throw new DomainError('forbidden', 'not_eligible', why, { reason: why });
    if (Number(s.seats_taken) >= s.capacity) {
      throw new DomainError('conflict', 'session_full', `All ${s.capacity} seats are taken. Join the waitlist and you will be e-mailed if a seat frees up, or choose another session.`);
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
      throw new DomainError('not_found', 'not_found', 'You have no seat at this session.');
    }
    if (s.starts_at <= now) throw new DomainError('conflict', 'session_started', 'This session has started; tell the instructor if you cannot stay.');
    await trx('induction_seats').where({ id: seat.id }).update({ state: 'cancelled', cancelled_at: now });
    const person = await personRow(trx, personId);
    const site = await getSettings(trx);
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
export async function offerFreedSeat(trx: Knex.Transaction, sessionId: string, now: Date, site: { name: string; timeZone: string; locale: string }): Promise<string | null> {
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
    const site = await getSettings(trx);
    const why = await refusal(trx, personId, s, now, site);
    if (why) throw new DomainError('forbidden', 'not_eligible', why, { reason: why });
    if (await trx('induction_seats').where({ session_id: s.id, person_id: personId }).whereNot('state', 'cancelled').first('id')) {
      throw new DomainError('conflict', 'already_booked', 'You already have a seat at this session.');
    }
    if (Number(s.seats_taken) < s.capacity) throw new DomainError('conflict', 'seats_free', 'There are free seats: book one instead of waiting.');
    if (await trx('induction_waitlist').where({ session_id: s.id, person_id: personId, state: 'waiting' }).first('id')) {
      throw new DomainError('conflict', 'already_waiting', 'You are already on the waitlist for this session.');
    }
    const [w] = await trx('induction_waitlist').insert({ session_id: s.id, person_id: personId }).returning('id');
    const position = Number((await trx('induction_waitlist').where({ session_id: s.id, state: 'waiting' }).count<{ n: number }[]>('* as n'))[0]?.n ?? 1);
    await recordAudit(trx, { actorId: personId, kind: 'induction.waitlist_joined', subjectType: 'induction_session', subjectId: s.id, summary: `Joined the waitlist of the ${s.group_name} session` });
    return { waitlistId: w.id as string, position };
  });
}
