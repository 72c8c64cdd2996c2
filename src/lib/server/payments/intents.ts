/**
 * Payment intents (payment-intents.ts): run by the worker, tried once at once by the request that recorded them,
 * and the calls that record-and-try them: releasing a booking's holds, a booking fee, a refund.
 */
import { siteMoney } from '@lib/server/settings';
import { env } from '@lib/server/env';
import { db, holdingAConnection, transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { log } from '@lib/server/log';
import { queueMail } from '@lib/server/mail';
import { recordAudit } from '@lib/server/audit';
import type { PaymentIntent } from '@lib/server/payment-intents';
import { activeWithRole } from '@lib/server/people';
import { quoteFor } from '@lib/server/prices';
import { billQuote, chargeBeamTime, holdForBooking } from './billing';
import { getCharge, personFor, updateCharge, type Charge } from './charge-records';
import { drive, markFailed, parseOp } from './charge-runs';
import { classify, key, provider, ProviderNotReady, quickly, unreachable } from './provider';
import { requestRefund, runRefund } from './refunds';

/** A late-cancellation or no-show fee for a booking (priced by the version in force at the booking's start). */
export async function chargeBookingFee(input: { personId: string; machineId: string; bookingId: string; startsAt: Date; fee: 'late_cancellation' | 'no_show' }, mode: 'request' | 'intent' = 'request'): Promise<Charge> {
  // once per booking: a retried job finds the fee it made before
  const made = await db()('charges').where({ booking_id: input.bookingId, kind: input.fee }).first('id');
  if (made) return (await getCharge(made.id))!;
  const person = await personFor(input.personId);
  const q = await quoteFor({
    machineId: input.machineId, tier: person.tier, minutes: 0, at: input.startsAt, personId: input.personId,
    lateCancellation: input.fee === 'late_cancellation', noShow: input.fee === 'no_show',
  });
  await releaseHoldsForBooking(input.bookingId, input.fee === 'no_show' ? 'no-show' : 'late cancellation', { notify: false });
  return billQuote(person, q, { kind: input.fee, machineId: input.machineId, bookingId: input.bookingId, sessionId: null, startedAt: input.startsAt, minutes: 0 }, mode);
}

/** Lets a card hold go at the provider (the same key on every try); an unreachable provider is the `provider_unreachable` error. */
async function letHoldGo(chargeId: string, providerChargeId: string): Promise<void> {
  try {
    await provider().refunds.create({ charge: providerChargeId }, { idempotencyKey: key(chargeId, 'release') });
  } catch (err) {
    if (classify(err) === 'unreachable') throw unreachable();
    throw err;
  }
}

/**
 * A booking the space could not give (bumped by a `stop` fault, or cancelled in time): its holds are
 * released and anything already taken is refunded in full, with an e-mail to the member.
 */
export async function releaseHoldsForBooking(bookingId: string, reason: string, opts: { notify?: boolean; actorId?: string | null } = {}): Promise<Charge[]> {
  const rows = await db()('charges').where({ booking_id: bookingId }).whereIn('state', ['pending', 'queued', 'held', 'captured']).select('id');
  const done: Charge[] = [];
  for (const { id } of rows) {
    const c = (await getCharge(id))!;
    if (c.state === 'held' && c.providerChargeId) {
      await letHoldGo(c.id, c.providerChargeId);
      await updateCharge(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    } else if (c.state === 'queued' && parseOp((await db()('charges').where({ id: c.id }).first('pending_op'))?.pending_op ?? '')?.op === 'hold') {
      // an earlier try may have reached the provider before the answer was lost: finish it with the same key,
      // then let it go, so no hold is left behind at the provider
      const now = await drive(c.id).catch((err) => {
        if (err instanceof ProviderNotReady) throw unreachable();
        throw err;
      });
      if (now?.state === 'held' && now.providerChargeId) {
        await letHoldGo(c.id, now.providerChargeId);
      }
      await updateCharge(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    } else if (c.state === 'pending' || c.state === 'queued') {
      await updateCharge(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    } else if (c.state === 'captured' && c.capturedMinor > c.refundedMinor) {
      await refund(c.id, c.capturedMinor - c.refundedMinor, reason, opts.actorId ?? null, { notify: false });
    }
    done.push((await getCharge(c.id))!);
  }
  if (done.length && opts.notify !== false) {
    const p = await personFor(done[0]!.personId);
    await queueMail(null, p.email, 'Your booking was released: no charge', {
      greeting: `Hello ${p.name},`,
      paragraphs: [`Your booking could not go ahead (${reason}). Any hold on your card has been released and anything taken has been refunded. You are not charged for time the space could not give.`],
      action: { label: 'Open your Account', url: `${env().PUBLIC_BASE_URL}/account` },
    });
  }
  return done;
}

/**
 * Refunds now as far as the provider allows: records the refund and tries it once. Returns the charge, which reads
 * `refund pending` while the provider is unreachable (the worker completes it later, exactly once).
 */
export async function refund(chargeId: string, amountMinor: number, reason: string, actorId: string | null, opts: { notify?: boolean } = {}): Promise<Charge> {
  const r = await requestRefund(chargeId, amountMinor, reason, actorId, opts);
  if (r.pending) await tryIntentNow({ kind: 'refund', refundId: r.refundId });
  return (await getCharge(chargeId))!;
}


/** Intents on one booking (or session, refund, charge) run one at a time, in any process. */
function lockKey(i: PaymentIntent): string {
  switch (i.kind) {
    case 'booking.hold':
    case 'booking.release':
    case 'booking.fee':
      return `payments.booking:${i.bookingId}`;
    case 'session.charge':
      return `payments.session:${i.sessionId}`;
    case 'refund':
      return `payments.refund:${i.refundId}`;
    case 'charge':
      return `payments.charge:${i.chargeId}`;
  }
}

/** The worker waits up to 30 s for another process's run of the same intent; a request's one try waits up to 4 s. */
async function withIntentLock<T>(i: PaymentIntent, waitSeconds: number, work: () => Promise<T>): Promise<T> {
  return transaction(async (trx) => {
    // SET LOCAL lock_timeout and the lock in one round trip: the FROM subquery (volatile, so never flattened) runs first
    await trx.raw(`SELECT pg_advisory_xact_lock(hashtextextended(?, 0)) FROM (SELECT set_config('lock_timeout', ?, true)) t`, [lockKey(i), `${Math.round(waitSeconds)}s`]);
    return work();
  });
}

async function bookingRow(id: string): Promise<{ id: string; person_id: string; machine_id: string; kind: string; state: string; starts_at: Date; ends_at: Date } | undefined> {
  return db()('bookings').where({ id }).first('id', 'person_id', 'machine_id', 'kind', 'state', 'starts_at', 'ends_at');
}

/** The hold of a booking: made once (the charge row first, its operation written down), then placed or resumed. */
async function holdBooking(bookingId: string): Promise<void> {
  // the booking and its first beam-time charge (made by an earlier try) in one statement
  const b = (await db()('bookings as b').where('b.id', bookingId).first('b.id', 'b.person_id', 'b.machine_id', 'b.kind', 'b.state', 'b.starts_at', 'b.ends_at',
    db().raw("(SELECT c.id FROM charges c WHERE c.booking_id = b.id AND c.kind = 'beam_time' ORDER BY c.created_at LIMIT 1) AS made_id"))) as
    (NonNullable<Awaited<ReturnType<typeof bookingRow>>> & { made_id: string | null }) | undefined;
  if (!b || b.kind !== 'personal' || !['reserved', 'checked in'].includes(b.state)) return; // cancelled before the hold: nothing to hold
  if (b.made_id) {
    await drive(b.made_id);
    return;
  }
  try {
    await holdForBooking({ personId: b.person_id, machineId: b.machine_id, bookingId, startsAt: b.starts_at, minutes: Math.round((b.ends_at.getTime() - b.starts_at.getTime()) / 60_000) }, 'intent');
  } catch (err) {
    // no card saved, or a failed payment: nothing is held, beam time is charged at check-out
    if (err instanceof DomainError && err.kind === 'payment_required') return;
    throw err;
  }
  const after = await db()('charges').where({ booking_id: bookingId, kind: 'beam_time' }).orderBy('created_at').first('id');
  if (after) await drive(after.id);
}

async function runIntentNow(i: PaymentIntent): Promise<void> {
  switch (i.kind) {
    case 'booking.hold':
      return holdBooking(i.bookingId);
    case 'booking.release': {
      await releaseHoldsForBooking(i.bookingId, i.reason, { notify: i.notify, actorId: i.actorId ?? null });
      return;
    }
    case 'booking.fee': {
      const b = await bookingRow(i.bookingId);
      if (!b) return;
      const fee = await chargeBookingFee({ personId: b.person_id, machineId: b.machine_id, bookingId: b.id, startsAt: b.starts_at, fee: i.fee }, 'intent');
      await drive(fee.id);
      return;
    }
    case 'session.charge': {
      const sRow = await db()('machine_sessions').where({ id: i.sessionId }).first('id', 'person_id', 'machine_id', 'booking_id', 'checked_in_at', 'checked_out_at', 'beam_minutes');
      if (!sRow?.checked_out_at) return;
      const c = await chargeBeamTime({
        personId: sRow.person_id, machineId: sRow.machine_id, bookingId: sRow.booking_id, sessionId: sRow.id,
        startedAt: sRow.checked_in_at, minutes: sRow.beam_minutes ?? 0, materials: i.materials,
      }, 'intent');
      await drive(c.id);
      return;
    }
    case 'refund':
      return runRefund(i.refundId);
    case 'charge':
      await drive(i.chargeId);
      return;
  }
}

/**
 * Worker entry point for `payments.intent`. A refusal that no retry can change (a 4xx of ours, e.g. no price in
 * force) is logged and the job ends; anything else is thrown for pg-boss to retry with back-off. On the last
 * attempt the intent is given up: see giveUp.
 */
export async function runIntent(i: PaymentIntent, attempt: { final: boolean } = { final: false }): Promise<void> {
  try {
    await withIntentLock(i, 30, () => runIntentNow(i));
  } catch (err) {
    if (err instanceof DomainError && err.kind !== 'unavailable') {
      log.warn({ event: 'payment_intent', kind: i.kind, err: { message: err.message } }, 'payment intent not done');
      return;
    }
    if (attempt.final) {
      await giveUp(i, err instanceof Error ? err.message : String(err));
      return;
    }
    throw err;
  }
}

/**
 * A request's one try of an intent it recorded (short provider timeout; gives up waiting after a few seconds when
 * a worker is running it just now). Never throws for the provider: the job is the source of truth. Returns our own refusal (e.g. not priced).
 */
export async function tryIntentNow(i: PaymentIntent): Promise<DomainError | null> {
  try {
    // the intent lock holds a connection while the work asks for others: at most half the pool does that at once
    await quickly(() => holdingAConnection(() => withIntentLock(i, 4, () => runIntentNow(i))));
    return null;
  } catch (err) {
    if (err instanceof DomainError && err.kind !== 'unavailable') return err;
    if (!(err instanceof ProviderNotReady)) log.warn({ event: 'payment_intent', kind: i.kind, err: { message: (err as Error).message } }, 'payment intent left to the worker');
    return null;
  }
}

/** After a commit that cancelled or bumped bookings: tries their releases at once (their intents were recorded with the change). */
export async function releaseHoldsAfterCancel(bookingIds: readonly string[], reason: string, actorId: string | null, notify = false): Promise<void> {
  for (const id of bookingIds) await tryIntentNow({ kind: 'booking.release', bookingId: id, reason, notify, actorId });
}

/**
 * Every retry failed: the charge is marked `payment failed` with the reason (a refund goes back to `captured`
 * with the refund marked failed; a release that never went through is left held) and the person and the
 * admins are e-mailed.
 */
async function giveUp(i: PaymentIntent, reason: string): Promise<void> {
  const why = `The card service could not complete this after every retry (${reason}).`;
  const admins = async (subject: string, paragraphs: string[]) => {
    for (const a of await activeWithRole('admin')) {
      await queueMail(null, a.email, subject, { greeting: `Hello ${a.name},`, paragraphs, action: { label: 'Open Reconciliation', url: `${env().PUBLIC_BASE_URL}/admin/reconciliation` } });
    }
  };
  if (i.kind === 'refund') {
    const r = await db()('charge_refunds').where({ id: i.refundId }).first();
    if (!r || r.state !== 'pending') return;
    const c = (await getCharge(r.charge_id))!;
    await transaction(async (trx) => {
      await trx('charge_refunds').where({ id: i.refundId }).update({ state: 'failed', failure_message: why });
      await updateCharge(trx, c.id, { state: 'captured', failure_message: `A refund of ${await siteMoney(r.amount_minor, c.currency)} failed: ${why}` });
      await recordAudit(trx, { actorId: null, kind: 'charge.refund_failed', subjectType: 'charge', subjectId: c.id, summary: `Refund of ${await siteMoney(r.amount_minor, c.currency)} to ${c.personName} failed: ${why}` });
      await queueMail(trx, c.personEmail!, `Refund delayed: ${await siteMoney(r.amount_minor, c.currency)}`, {
        greeting: `Hello ${c.personName},`,
        paragraphs: [`We could not yet refund ${await siteMoney(r.amount_minor, c.currency)} to your card. The space's admins have been told and will settle it with you.`],
      });
    });
    await admins(`Refund failed for ${c.personName}`, [`A refund of ${await siteMoney(r.amount_minor, c.currency)} on charge ${c.id} failed for good. ${why}`, 'Try it again from the charge, or settle it by hand.']);
    return;
  }
  const ids: string[] = [];
  if (i.kind === 'charge') ids.push(i.chargeId);
  else if (i.kind === 'session.charge') ids.push(...(await db()('charges').where({ session_id: i.sessionId }).pluck('id')));
  else ids.push(...(await db()('charges').where({ booking_id: i.bookingId }).pluck('id')));
  for (const id of ids) {
    const c = (await getCharge(id))!;
    if (i.kind === 'booking.release') {
      if (c.state === 'held') await admins(`A card hold could not be released for ${c.personName}`, [`The hold of ${await siteMoney(c.heldMinor, c.currency)} on charge ${c.id} could not be released. ${why}`, 'Release it at the provider by hand.']);
      continue;
    }
    if (c.state !== 'pending' && c.state !== 'queued') continue;
    await markFailed(c, 'provider_unreachable', why);
    await admins(`Payment failed for ${c.personName}`, [`Charge ${c.id} (${await siteMoney(c.cardAmountMinor || c.amountMinor, c.currency)}) is marked payment failed. ${why}`]);
  }
}

