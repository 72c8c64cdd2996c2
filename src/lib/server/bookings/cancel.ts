/** Cancelling bookings: one by its owner or a steward, and all future ones of a person or a machine (cascades). */
import type { Knex } from 'knex';
import { transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { getRules } from '@lib/server/booking-rules';
import { queueMail } from '@lib/server/mail';
import { env } from '@lib/server/env';
import { cancellationIntent, recordPaymentIntent } from '@lib/server/payment-intents';
import { hasAnyRole } from '@lib/roles';
import { isLateCancel } from '@lib/availability';
import { toBooking, type Actor, type Booking, type BookingKind, type Row } from './records';
import { siteSettings } from './gate';
import { cancellationAttachment, formatRange, raiseSequence, sendCancellation } from './messages';
import { offerFreedTime } from './waitlist';

/**
 * Cancels a booking: the owner, or a steward or admin. After the cut-off it is flagged late. The money side (a late
 * one is charged the late-cancellation fee, which releases the hold first; an in-time one only releases the hold)
 * is an intent recorded in the same transaction (cancellationIntent); the route may try it at once.
 */
export async function cancelBooking(actor: Actor, id: string, now = new Date()): Promise<Booking> {
  return cancelBookingRow(actor, id, now);
}

async function cancelBookingRow(actor: Actor, id: string, now: Date): Promise<Booking> {
  return transaction(async (trx) => {
    const r = (await trx('bookings').where({ id }).forUpdate().first()) as Row | undefined;
    if (!r) throw new DomainError('not_found', 'not_found', 'No such booking.');
    const mine = r.person_id === actor.id;
    if (!mine && !hasAnyRole(actor.roles, ['steward', 'admin'])) throw new DomainError('not_found', 'not_found', 'No such booking.');
    if (r.state !== 'reserved') throw new DomainError('conflict', 'not_cancellable', `This booking is ${r.state} and cannot be cancelled.`);
    if (r.ends_at <= now) throw new DomainError('conflict', 'not_cancellable', 'This booking has ended.');
    const rules = await getRules(r.machine_id, trx);
    const late = r.kind !== 'hold' && isLateCancel(r.starts_at, now, rules);
    const [u] = await trx('bookings')
      .where({ id })
      .update({ state: 'cancelled', late_cancel: late, cancelled_at: now, cancelled_by: actor.id, calendar_sequence: raiseSequence(trx), updated_at: trx.fn.now() })
      .returning('*');
    const booking = toBooking(u as Row);
    await sendCancellation(
      trx,
      u as Row,
      `${mine ? 'You cancelled it' : 'A steward or admin cancelled it'}${late && r.kind === 'personal' ? ' after the cancellation cut-off, so a late-cancellation fee may be charged (see your account).' : ': any hold on your card is released.'}`,
    );
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'booking.cancelled',
      subjectType: 'booking',
      subjectId: id,
      summary: late ? 'Booking cancelled after the cut-off (late)' : 'Booking cancelled',
      before: { state: r.state },
      after: { state: 'cancelled', lateCancel: late },
    });
    if (r.kind === 'hold') await trx('waitlist_entries').where({ hold_booking_id: id }).update({ state: 'withdrawn' });
    await offerFreedTime(trx, r.machine_id, { start: r.starts_at > now ? r.starts_at : now, end: r.ends_at }, now);
    await recordPaymentIntent(trx, cancellationIntent(booking, actor.id));
    return booking;
  });
}

/**
 * Deactivation (people.ts): cancels the person's reserved bookings that have not ended yet, in the caller's
 * transaction, audited one by one, and offers the freed time to the waitlist. Returns the cancelled ids;
 * their card holds are released by the intents recorded here (payment-intents.ts).
 */
export async function cancelFutureBookingsOf(trx: Knex.Transaction, actorId: string, personId: string, now = new Date()): Promise<string[]> {
  const closing = actorId === personId;
  return cancelFutureBookings(trx, actorId, { person_id: personId }, {
    summary: closing ? 'Booking cancelled: the person closed their account' : 'Booking cancelled: the person was deactivated',
    reason: closing ? 'account closed' : 'person deactivated',
    mail: closing ? 'You closed your Beamwarden account, so your bookings are cancelled. You are not charged for them: any hold on your card is released.' : 'Your account was deactivated by an admin, so your bookings are cancelled. You are not charged for them: any hold on your card is released.',
  }, now);
}

/**
 * Retirement (machines.ts): cancels every reserved booking on the machine that has not ended yet, in the caller's
 * transaction, audited one by one; the people whose bookings they were are e-mailed (queued in the transaction)
 * with the admin's reason; nothing is offered to the waitlist (the machine takes no more bookings) and its waitlist
 * entries are withdrawn. Returns the cancelled ids (their holds are released by the intents recorded with them).
 */
export async function cancelFutureBookingsOnMachine(trx: Knex.Transaction, actorId: string, machine: { id: string; name: string }, why: string, now = new Date()): Promise<string[]> {
  const ids = await cancelFutureBookings(trx, actorId, { machine_id: machine.id }, { summary: `Booking cancelled: ${machine.name} was retired`, reason: 'machine retired', offer: false }, now);
  await trx('waitlist_entries').where({ machine_id: machine.id }).whereIn('state', ['waiting', 'offered']).update({ state: 'withdrawn' });
  if (!ids.length) return ids;
  const site = await siteSettings(trx);
  const rows = (await trx('bookings as b').join('people as p', 'p.id', 'b.person_id').whereIn('b.id', ids).whereNot('b.kind', 'hold')
    .select('b.id', 'b.kind', 'b.course_name', 'b.starts_at', 'b.ends_at', 'b.calendar_sequence', 'b.person_id', 'p.email', 'p.name')) as {
    id: string; kind: BookingKind; course_name: string | null; starts_at: Date; ends_at: Date; calendar_sequence: number; person_id: string; email: string; name: string;
  }[];
  for (const r of rows) {
    await queueMail(trx, r.email, `Your booking on ${machine.name} is cancelled: the machine is retired`, {
      greeting: `Hello ${r.name},`,
      paragraphs: [
        `${machine.name} has been retired from use, so your ${r.kind === 'class' ? `class block (${r.course_name ?? 'class'})` : 'booking'} on ${await formatRange(trx, { startsAt: r.starts_at, endsAt: r.ends_at }, site.timeZone)} cannot go ahead.`,
        `The reason given: ${why}`,
        'You are not charged for it: any hold on your card is released.',
        'The attached calendar file removes it from your calendar.',
      ],
      action: { label: 'Book another machine', url: `${env().PUBLIC_BASE_URL}/book` },
    }, [cancellationAttachment(r, machine.name, site.name)]);
  }
  return ids;
}

/**
 * The one way a cascade ends bookings: every reserved booking of a person or a machine that has not ended yet, in
 * the caller's transaction, locked, each audited, its waitlist hold closed, its freed time offered to the waitlist
 * (unless `offer: false`) and its card hold released by an intent recorded with it. `cancelled` for a person
 * leaving and a machine retired; `bumped` for a machine going out of service (offerFreedTime offers nothing on
 * a machine out of service; the time is offered again when it returns). Returns the ended rows as they now are.
 */
export async function endFutureBookings(
  trx: Knex.Transaction,
  actorId: string | null,
  where: { person_id: string } | { machine_id: string },
  how: { state?: 'cancelled' | 'bumped'; summary: string; reason: string; offer?: boolean; mail?: string },
  now: Date,
): Promise<Row[]> {
  const bumped = how.state === 'bumped';
  const rows = (await trx('bookings')
    .where({ ...where, state: 'reserved' })
    .where('ends_at', '>', now)
    .orderBy('starts_at')
    .forUpdate()
    .select('*')) as Row[];
  const ended: Row[] = [];
  for (const r of rows) {
    const change = bumped
      ? { state: 'bumped' }
      : { state: 'cancelled', late_cancel: false, cancelled_at: now, cancelled_by: actorId };
    const [u] = await trx('bookings').where({ id: r.id })
      .update({ ...change, calendar_sequence: raiseSequence(trx), updated_at: trx.fn.now() })
      .returning('*');
    ended.push(u as Row);
    if (how.mail) await sendCancellation(trx, u as Row, how.mail);
    if (r.kind === 'hold') await trx('waitlist_entries').where({ hold_booking_id: r.id }).update({ state: bumped ? 'expired' : 'withdrawn' });
    await recordAudit(trx, {
      actorId,
      kind: bumped ? 'booking.bumped' : 'booking.cancelled',
      subjectType: 'booking',
      subjectId: r.id,
      summary: how.summary,
      before: { state: 'reserved' },
      after: bumped ? { state: 'bumped', reason: how.reason } : { state: 'cancelled', lateCancel: false, reason: how.reason },
    });
    if (how.offer !== false) await offerFreedTime(trx, r.machine_id, { start: r.starts_at > now ? r.starts_at : now, end: r.ends_at }, now);
    await recordPaymentIntent(trx, { kind: 'booking.release', bookingId: r.id, reason: how.reason, notify: false, actorId });
  }
  return ended;
}

async function cancelFutureBookings(
  trx: Knex.Transaction,
  actorId: string,
  where: { person_id: string } | { machine_id: string },
  how: { summary: string; reason: string; offer?: boolean; mail?: string },
  now: Date,
): Promise<string[]> {
  return (await endFutureBookings(trx, actorId, where, how, now)).map((r) => r.id);
}
