/** The sweep (run every minute by the worker): no-shows and expired waitlist holds. */
import type { Knex } from 'knex';
import { transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { recordPaymentIntent } from '@lib/server/payment-intents';
import { NO_SHOW_AFTER_MINUTES } from '@lib/availability';
import type { Row } from './records';
import { offerFreedTime } from './waitlist';

export async function sweepBookings(now = new Date(), only?: { machineIds: string[] }): Promise<{ noShows: number; expiredHolds: number }> {
  // each personal no-show is charged the no-show fee (which releases its hold first): an intent recorded with it
  const r = await sweepRows(now, only);
  return { noShows: r.noShows, expiredHolds: r.expiredHolds };
}

/** `only`: the bookings of these machines (a test sweeps its own machines); the worker sweeps every machine. */
async function sweepRows(now: Date, only?: { machineIds: string[] }): Promise<{ noShows: number; expiredHolds: number; noShowBookings: Row[] }> {
  const scoped = (q: Knex.QueryBuilder) => (only ? q.whereIn('machine_id', only.machineIds) : q);
  return transaction(async (trx) => {
    const late = (await trx('bookings')
      .modify(scoped)
      .where({ state: 'reserved' })
      .whereIn('kind', ['personal', 'class'])
      .whereNull('checked_in_at')
      // an induction session's machine time is not checked in at the machine: it is held to its end
      .whereNotExists((q) => q.select(trx.raw('1')).from('induction_sessions as s').whereRaw('s.booking_id = bookings.id'))
      .where('starts_at', '<=', new Date(now.getTime() - NO_SHOW_AFTER_MINUTES * 60_000))
      .forUpdate()
      .skipLocked()
      .select('*')) as Row[];
    for (const r of late) {
      await trx('bookings').where({ id: r.id }).update({ state: 'no-show', updated_at: trx.fn.now() });
      await recordAudit(trx, {
        actorId: null,
        kind: 'booking.no_show',
        subjectType: 'booking',
        subjectId: r.id,
        summary: 'Not checked in 15 minutes after the start: no-show, remaining time released',
        before: { state: 'reserved' },
        after: { state: 'no-show' },
      });
      await offerFreedTime(trx, r.machine_id, { start: now, end: r.ends_at }, now);
      if (r.kind === 'personal') await recordPaymentIntent(trx, { kind: 'booking.fee', bookingId: r.id, fee: 'no_show' });
    }
    const holds = (await trx('bookings')
      .modify(scoped)
      .where({ state: 'reserved', kind: 'hold' })
      .where('hold_expires_at', '<=', now)
      .forUpdate()
      .skipLocked()
      .select('*')) as Row[];
    for (const h of holds) {
      await trx('bookings').where({ id: h.id }).update({ state: 'cancelled', cancelled_at: now, updated_at: trx.fn.now() });
      await recordPaymentIntent(trx, { kind: 'booking.release', bookingId: h.id, reason: 'waitlist offer expired', notify: false });
      await trx('waitlist_entries').where({ hold_booking_id: h.id }).update({ state: 'expired' });
      await offerFreedTime(trx, h.machine_id, { start: h.starts_at > now ? h.starts_at : now, end: h.ends_at }, now);
    }
    return { noShows: late.length, expiredHolds: holds.length, noShowBookings: late };
  });
}
