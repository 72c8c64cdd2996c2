/** Publishing and cancelling an induction session (instructor), with its class block on the machine. */
import { transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { recordAudit } from '@lib/server/audit';
import { queueMail } from '@lib/server/mail';
import { releaseClassTime, reserveClassTime } from '@lib/server/bookings/class-blocks';
import { SESSION_KIND_LABELS, placeLabel, type SessionInput } from '@lib/induction';
import { formatSessionTime, link, sessionRow, type SessionView, view } from './records';
import { roster } from './roster';
import { icsAttachment } from './seats';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Publishing

export async function createSession(actorId: string, input: SessionInput, now = new Date()): Promise<SessionView> {
  return transaction(async (trx) => {
    const group = await trx('machine_groups').where({ id: input.groupId }).first('id', 'name');
    if (!group) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { groupId: 'No such machine group.' });
    if (input.startsAt <= now) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { startsAt: 'Choose a time in the future.' });
    let machineName: string | null = null;
    if (input.machineId) {
      const m = await trx('machines').where({ id: input.machineId }).whereNull('retired_at').first('id', 'name', 'group_id');
      if (!m) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { machineId: 'No such machine.' });
      if (m.group_id !== group.id) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { machineId: `${m.name} is not in the ${group.name} group.` });
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
    if (s.state === 'cancelled') throw new DomainError('conflict', 'session_cancelled', 'This session is already cancelled.');
    if (s.starts_at <= now) throw new DomainError('conflict', 'session_started', 'This session has started; mark attendance on the roster instead.');
    await trx('induction_sessions').where({ id }).update({ state: 'cancelled', cancelled_at: now, updated_at: now });
    if (s.booking_id) await releaseClassTime(trx, actorId, s.booking_id, now);
    const seats = await trx('induction_seats as x').join('people as p', 'p.id', 'x.person_id').where({ 'x.session_id': id, 'x.state': 'booked' }).select('x.id', 'p.email', 'p.name');
    await trx('induction_seats').where({ session_id: id, state: 'booked' }).update({ state: 'cancelled', cancelled_at: now });
    await trx('induction_waitlist').where({ session_id: id, state: 'waiting' }).update({ state: 'withdrawn' });
    const site = await getSettings(trx);
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
