/**
 * What the money side must do after a change elsewhere (a booking made or cancelled, a session checked out, a
 * refund asked for), recorded as a pg-boss job inside the transaction that made the change: the intent exists
 * exactly when the change was committed, and survives a process that dies right after the commit. The worker
 * runs it (payments/intents.ts, runIntent) with idempotency keys derived from our own ids, retrying with back-off; the
 * request that made the change may try it once at once (payments/intents.ts, tryIntentNow).
 *
 * This module knows only the jobs table (and one read of the charges: the holds standing on bookings), so bookings
 * and other areas record intents and show what cancelling releases without importing payments.
 */
import type { Knex } from 'knex';
import { db } from './db';
import { enqueue, type QueuedJob } from './jobs';

export type PaymentIntent =
  /** a booking was made: hold its estimate on the card (paid tiers with a saved card) */
  | { kind: 'booking.hold'; bookingId: string }
  /** a booking was cancelled in time, bumped, or cancelled by a cascade: let its hold go, refund anything taken */
  | { kind: 'booking.release'; bookingId: string; reason: string; notify?: boolean; actorId?: string | null }
  /** a late cancellation or a no-show: charge the fee (releasing the hold first) */
  | { kind: 'booking.fee'; bookingId: string; fee: 'late_cancellation' | 'no_show' }
  /** a session was checked out: charge its beam time (capturing the booking's hold) */
  | { kind: 'session.charge'; sessionId: string; materials: { sku: string; quantity: number }[] }
  /** a refund was recorded: make it at the provider */
  | { kind: 'refund'; refundId: string }
  /** a charge left waiting for the provider: run its pending operation again */
  | { kind: 'charge'; chargeId: string };

export async function recordPaymentIntent(trx: Knex.Transaction, intent: PaymentIntent): Promise<void> {
  await enqueue(trx, 'payments.intent', intent);
}

/** recordPaymentIntent's job, for enqueueAll with the other jobs of a transaction. */
export function paymentIntentJob(intent: PaymentIntent): QueuedJob {
  return { name: 'payments.intent', data: intent };
}

/** The intent a cancellation records: a late cancellation of a personal booking is charged the fee; else the hold is released. */
export function cancellationIntent(b: { id: string; lateCancel: boolean; kind: string }, actorId: string | null): PaymentIntent {
  return b.lateCancel && b.kind === 'personal'
    ? { kind: 'booking.fee', bookingId: b.id, fee: 'late_cancellation' }
    : { kind: 'booking.release', bookingId: b.id, reason: 'cancelled in time', notify: false, actorId };
}

/** The card holds standing on these bookings (state `held`), by booking: what cancelling would release. */
export async function heldOnBookings(bookingIds: readonly string[]): Promise<Map<string, { amountMinor: number; currency: string }>> {
  const out = new Map<string, { amountMinor: number; currency: string }>();
  if (!bookingIds.length) return out;
  const rows = (await db()('charges').whereIn('booking_id', bookingIds).where({ state: 'held' }).select('booking_id', 'amount_minor', 'currency')) as { booking_id: string; amount_minor: number; currency: string }[];
  for (const r of rows) {
    const before = out.get(r.booking_id);
    out.set(r.booking_id, { amountMinor: (before?.amountMinor ?? 0) + Number(r.amount_minor), currency: r.currency });
  }
  return out;
}
