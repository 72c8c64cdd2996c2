/**
 * Provider operations on one charge (hold, charge, capture), each with its own idempotency key; a charge waiting
 * for the provider is `queued` with its operation kept in `pending_op` and driven again by the worker.
 */
import { siteMoney } from '@lib/server/settings';
import type { Knex } from 'knex';
import { recordAudit } from '@lib/server/audit';
import { db, transaction } from '@lib/server/db';
import { env } from '@lib/server/env';
import { DomainError } from '@lib/server/errors';
import { queueMail } from '@lib/server/mail';
import { recordPaymentIntent } from '@lib/server/payment-intents';
import { cardOf, getCharge, personFor, updateCharge, type Charge } from './charge-records';
import { classify, key, provider, ProviderNotReady, type ProviderError } from './provider';
import { assignReceipt, queueReceipt } from './receipts';

type Op = { op: 'hold' } | { op: 'charge'; amountMinor: number } | { op: 'capture'; amountMinor: number };

const opText = (o: Op) => (o.op === 'hold' ? 'hold' : `${o.op}:${o.amountMinor}`);
export function parseOp(s: string): Op | null {
  if (s === 'hold') return { op: 'hold' };
  const m = /^(charge|capture):(\d+)$/.exec(s);
  return m ? ({ op: m[1] as 'charge' | 'capture', amountMinor: Number(m[2]) } as Op) : null;
}

/**
 * Runs an operation. On an unreachable provider the charge is `queued` with its operation kept; in mode 'request'
 * an intent is recorded so the worker retries it, in mode 'intent' (the worker running an intent, or a request's
 * one try of it) the intent's own job retries. Returns the charge after.
 */
export async function run(chargeId: string, op: Op, mode: 'request' | 'intent' = 'request'): Promise<Charge> {
  const c = await getCharge(chargeId);
  if (!c) throw new DomainError('not_found', 'not_found', 'No charge has that id.');
  try {
    await perform(c, op);
  } catch (err) {
    const kind = classify(err);
    if (kind === 'card') {
      await markFailed(c, (err as ProviderError).code ?? 'card_declined', (err as ProviderError).message ?? 'The card was declined.');
    } else if (kind === 'unreachable') {
      await transaction(async (trx) => {
        await updateCharge(trx, c.id, { state: 'queued', pending_op: opText(op), failure_message: `Waiting for the card service: ${(err as ProviderError).message ?? 'no answer'}` });
        if (mode === 'request') await recordPaymentIntent(trx, { kind: 'charge', chargeId: c.id });
      });
    } else if (kind === 'missing' && op.op !== 'capture') {
      // the provider no longer knows the saved customer or card (deleted there): a stale record, not a decline.
      // Forget it, so the person is asked for a card again; nothing is left pending.
      await db()('payment_customers').where({ person_id: c.personId }).delete();
      const message = 'The payment provider no longer knows your saved card. Save a card again on the Account screen.';
      if (op.op === 'hold') await updateCharge(db(), c.id, { state: 'released', held_minor: 0, pending_op: null, failure_code: 'card_missing', failure_message: message });
      else await markFailed(c, 'card_missing', message);
    } else {
      // anything else (the hold to capture is gone, or a request the provider refused): failed in the open, never left pending
      await markFailed(c, kind === 'missing' ? 'hold_missing' : 'provider_error', (err as ProviderError).message ?? 'The payment provider refused the request.');
      throw err;
    }
  }
  return (await getCharge(chargeId))!;
}

async function perform(c: Charge, op: Op): Promise<void> {
  const p = provider();
  const description = `Beamwarden ${c.kind.replace('_', ' ')}${c.machineName ? ` on ${c.machineName}` : ''}`;
  if (op.op === 'hold' || op.op === 'charge') {
    const card = await cardOf(c.personId);
    if (!card) {
      await markFailed(c, 'no_card', 'No card is saved for this account.');
      return;
    }
    const amount = op.op === 'hold' ? c.cardAmountMinor : op.amountMinor;
    // the card (and its customer) is part of the key: the same attempt retried is one charge; a new card after a
    // decline, or the same card saved again after the provider lost it, is a new attempt
    const cardKey = `${card.customerId}-${card.sourceId}`;
    const opKey = op.op === 'hold' ? `hold-${cardKey}` : `charge-${amount}-${cardKey}`;
    if (c.providerChargeId && op.op === 'charge' && c.heldMinor > 0) {
      // a hold was there and the final amount is higher: let the hold go, then take the whole amount anew
      await p.refunds.create({ charge: c.providerChargeId }, { idempotencyKey: key(c.id, 'release') });
    }
    const ch = await p.charges.create(
      {
        amount,
        currency: c.currency.toLowerCase(),
        customer: card.customerId,
        source: card.sourceId,
        capture: op.op === 'charge',
        description,
        metadata: { chargeId: c.id, personId: c.personId },
      },
      { idempotencyKey: key(c.id, opKey) },
    );
    await transaction(async (trx) => {
      if (op.op === 'hold') {
        await updateCharge(trx, c.id, { state: 'held', held_minor: amount, provider_charge_id: ch.id, pending_op: null, failure_code: null, failure_message: null });
      } else {
        await updateCharge(trx, c.id, { state: 'captured', held_minor: 0, captured_minor: amount, card_amount_minor: amount, provider_charge_id: ch.id, pending_op: null, failure_code: null, failure_message: null });
        await afterCaptured(trx, c.id);
      }
    });
    return;
  }
  // capture a hold
  if (!c.providerChargeId) throw new Error(`charge ${c.id} has no hold to capture`);
  if (op.amountMinor === 0) {
    await p.refunds.create({ charge: c.providerChargeId }, { idempotencyKey: key(c.id, 'release') });
    await updateCharge(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    return;
  }
  if (op.amountMinor > c.heldMinor) {
    await perform(c, { op: 'charge', amountMinor: op.amountMinor });
    return;
  }
  await p.charges.capture(c.providerChargeId, { amount: op.amountMinor }, { idempotencyKey: key(c.id, `capture-${op.amountMinor}`) });
  await transaction(async (trx) => {
    await updateCharge(trx, c.id, { state: 'captured', held_minor: 0, captured_minor: op.amountMinor, card_amount_minor: op.amountMinor, pending_op: null, failure_code: null, failure_message: null });
    await afterCaptured(trx, c.id);
  });
}

/** Carried and failed sums paid together with this charge are marked settled; a receipt goes out. */
async function afterCaptured(trx: Knex.Transaction, chargeId: string): Promise<void> {
  const c = (await getCharge(chargeId, trx))!;
  const includes = (c.breakdown.carriedInMinor ?? 0) > 0;
  if (includes) {
    await trx('charges').where({ person_id: c.personId }).whereIn('state', ['carried']).whereNot('id', c.id).update({ state: 'settled', settled_by: c.id, updated_at: trx.fn.now() });
  }
  await assignReceipt(trx, c.id);
  await queueReceipt(trx, (await getCharge(chargeId, trx))!);
}

export async function markFailed(c: Charge, code: string, message: string): Promise<void> {
  await transaction(async (trx) => {
    await updateCharge(trx, c.id, { state: 'payment failed', pending_op: null, failure_code: code, failure_message: message, held_minor: 0 });
    const p = await personFor(c.personId, trx);
    await queueMail(trx, p.email, 'Payment failed', {
      greeting: `Hello ${p.name},`,
      paragraphs: [
        `We could not take ${await siteMoney(c.cardAmountMinor || c.amountMinor, c.currency)} for ${c.kind.replace('_', ' ')}${c.machineName ? ` on ${c.machineName}` : ''}: ${message}`,
        'Until it is settled, new bookings are paused. Save a working card on your Account screen and we will try again straight away.',
      ],
      action: { label: 'Open your Account', url: `${env().PUBLIC_BASE_URL}/account` },
    });
    await recordAudit(trx, { actorId: null, kind: 'charge.failed', subjectType: 'charge', subjectId: c.id, summary: `Payment failed for ${p.name}: ${message}` });
  });
}

/** Worker entry point of the older `payments.retry` jobs: the queued operation of a charge, same idempotency key. */
export async function retryQueuedCharge(chargeId: string): Promise<void> {
  await drive(chargeId);
}

/**
 * Runs the operation a charge is waiting for (state `pending` or `queued`, kept in `pending_op`), with the same
 * idempotency key as every earlier try. Throws while the provider still cannot be reached, so the job retries.
 */
export async function drive(chargeId: string): Promise<Charge | null> {
  const row = await db()('charges').where({ id: chargeId }).first('state', 'pending_op');
  if (!row) return null;
  if (row.state === 'pending' || row.state === 'queued') {
    const op = parseOp(row.pending_op ?? '');
    if (op) await run(chargeId, op, 'intent');
  }
  const after = (await getCharge(chargeId))!;
  if (after.state === 'pending' || after.state === 'queued') throw new ProviderNotReady(after.failureMessage ?? `The card service has not answered for charge ${chargeId}.`);
  return after;
}

/** Places the hold (capture: false) for a charge row in state `pending`. Idempotent. */
export async function placeHold(chargeId: string, mode: 'request' | 'intent' = 'request'): Promise<Charge> {
  const c = await getCharge(chargeId);
  if (!c) throw new DomainError('not_found', 'not_found', 'No charge has that id.');
  if (c.state !== 'pending') return c;
  return run(chargeId, { op: 'hold' }, mode);
}

/** Takes `amountMinor` from a held charge (releasing and charging anew when it is higher than the hold). */
export async function capture(chargeId: string, amountMinor: number): Promise<Charge> {
  const c = await getCharge(chargeId);
  if (!c) throw new DomainError('not_found', 'not_found', 'No charge has that id.');
  if (c.state !== 'held') return c;
  return run(chargeId, { op: 'capture', amountMinor });
}

/** Retries every failed or carried charge of a person as one charge on the saved card. Returns how many settled. */
export async function settleOwed(personId: string): Promise<number> {
  const owed = await db()('charges').where({ person_id: personId }).whereIn('state', ['payment failed', 'carried']).select('id', 'amount_minor', 'card_amount_minor', 'state', 'currency');
  const failed = owed.filter((o) => o.state === 'payment failed');
  let n = 0;
  for (const f of failed) {
    const amount = f.card_amount_minor || f.amount_minor;
    const after = await run(f.id, { op: 'charge', amountMinor: amount });
    if (after.state === 'captured') n++;
  }
  return n;
}

/** Throws 402 payment_required while the person has a failed payment. Booking calls this first. */
export async function assertCanBook(personId: string): Promise<void> {
  const failed = await db()('charges').where({ person_id: personId, state: 'payment failed' }).first('id');
  if (failed) throw paymentRequired();
}

/** assertCanBook's question as a select expression (one binding: the person's id), for a statement already made. */
export const PAYMENT_FAILED_SQL = "EXISTS (SELECT 1 FROM charges WHERE person_id = ? AND state = 'payment failed')";

export function paymentRequired(): DomainError {
  return new DomainError('payment_required', 'payment_required', 'A payment failed on this account. Save a working card on the Account screen to settle it, then book again.');
}
