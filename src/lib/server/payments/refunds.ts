/** Refunds: recorded first (the charge reads `refund pending`), then made at the provider exactly once. */
import { siteMoney } from '@lib/server/settings';
import { randomUUID } from 'node:crypto';
import type { Knex } from 'knex';
import { recordAudit } from '@lib/server/audit';
import { db, transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { queueMail } from '@lib/server/mail';
import { recordPaymentIntent } from '@lib/server/payment-intents';
import { getCharge, lockCharge, updateCharge, type Charge, type ChargeState } from './charge-records';
import { classify, provider, ProviderNotReady, type ProviderError } from './provider';

/**
 * Records a refund of `amountMinor` (full or partial) of a captured or recharged charge, with a reason; audited.
 * A recharge refund is done at once (no provider). A card refund is written down as `pending` (the charge reads
 * `refund pending`) with its intent in the same transaction; the provider call is made by runRefund — tried once
 * at once by refund(), then by the worker until it is done, exactly once (idempotency key from the refund's id).
 */
export async function requestRefund(chargeId: string, amountMinor: number, reason: string, actorId: string | null, opts: { notify?: boolean } = {}): Promise<{ refundId: string; pending: boolean }> {
  const refundId = randomUUID();
  return transaction(async (trx) => {
    const c = await lockCharge(trx, chargeId);
    const paid = c.method === 'recharge' ? c.amountMinor : c.capturedMinor;
    if (!(c.state === 'captured' || c.state === 'recharged')) {
      throw new DomainError('conflict', 'not_refundable', c.state === 'refund pending' ? 'A refund of this charge is already waiting for the card service; it completes by itself.' : `A charge in state "${c.state}" cannot be refunded.`);
    }
    const left = paid - c.refundedMinor;
    if (amountMinor < 1 || amountMinor > left) {
      throw new DomainError('invalid', 'invalid', `Refund between 1 and ${left} minor units.`, { amountMinor: `At most ${await siteMoney(left, c.currency)} is left to refund.` });
    }
    const card = c.method === 'card' && c.providerChargeId !== null;
    await trx('charge_refunds').insert({
      id: refundId, charge_id: c.id, amount_minor: amountMinor, reason, actor_id: actorId,
      state: card ? 'pending' : 'done', completed_at: card ? null : trx.fn.now(),
    });
    if (card) {
      await updateCharge(trx, c.id, { state: 'refund pending', failure_message: null });
      await recordPaymentIntent(trx, { kind: 'refund', refundId });
      await recordAudit(trx, {
        actorId, kind: 'charge.refund_requested', subjectType: 'charge', subjectId: c.id,
        summary: `Refund of ${await siteMoney(amountMinor, c.currency)} of ${await siteMoney(paid, c.currency)} to ${c.personName} asked for: ${reason}`,
        before: { state: c.state, refundedMinor: c.refundedMinor }, after: { state: 'refund pending', refundedMinor: c.refundedMinor },
      });
      return { refundId, pending: true };
    }
    await completeRefund(trx, c, refundId, amountMinor, reason, actorId, null, opts.notify !== false);
    return { refundId, pending: false };
  });
}

/** Writes a refund done: the charge's refunded sum and state, the audit entry, the person's e-mail. */
async function completeRefund(trx: Knex.Transaction, c: Charge, refundId: string, amountMinor: number, reason: string, actorId: string | null, providerRefundId: string | null, notify: boolean): Promise<void> {
  const paid = c.method === 'recharge' ? c.amountMinor : c.capturedMinor;
  const refunded = c.refundedMinor + amountMinor;
  const state: ChargeState = refunded >= paid ? 'refunded' : c.method === 'recharge' ? 'recharged' : 'captured';
  await trx('charge_refunds').where({ id: refundId }).update({ state: 'done', provider_refund_id: providerRefundId, completed_at: trx.fn.now(), failure_message: null });
  await updateCharge(trx, c.id, { refunded_minor: refunded, state, failure_message: null });
  await recordAudit(trx, {
    actorId,
    kind: 'charge.refunded',
    subjectType: 'charge',
    subjectId: c.id,
    summary: `Refunded ${await siteMoney(amountMinor, c.currency)} of ${await siteMoney(paid, c.currency)} to ${c.personName}: ${reason}`,
    before: { state: c.state, refundedMinor: c.refundedMinor },
    after: { state, refundedMinor: refunded },
  });
  if (notify) {
    await queueMail(trx, c.personEmail!, `Refund: ${await siteMoney(amountMinor, c.currency)}`, {
      greeting: `Hello ${c.personName},`,
      paragraphs: [`We refunded ${await siteMoney(amountMinor, c.currency)} of your charge of ${await siteMoney(c.amountMinor, c.currency)}. Reason: ${reason}`,
        c.method === 'card' ? 'Card refunds usually show on your statement within 5–10 days.' : `The refund is credited to cost centre ${c.costCentre}.`],
    });
  }
}

/** Makes a pending refund at the provider (same key on every try) and writes it done. Throws while the provider cannot be reached. */
export async function runRefund(refundId: string): Promise<void> {
  const r = await db()('charge_refunds').where({ id: refundId }).first();
  if (!r || r.state !== 'pending') return;
  const c = (await getCharge(r.charge_id))!;
  let providerRefundId: string;
  try {
    const pr = await provider().refunds.create(
      { charge: c.providerChargeId!, amount: r.amount_minor, metadata: { chargeId: c.id, refundId, reason: String(r.reason).slice(0, 450) } },
      { idempotencyKey: `beamwarden-refund-${refundId}` },
    );
    providerRefundId = pr.id;
  } catch (err) {
    if (classify(err) === 'unreachable') throw new ProviderNotReady(`The card service has not answered: ${(err as ProviderError).message ?? 'no answer'}`);
    throw err;
  }
  await transaction(async (trx) => {
    const now = await lockCharge(trx, c.id);
    const still = await trx('charge_refunds').where({ id: refundId }).forUpdate().first('state');
    if (still?.state !== 'pending') return; // another try wrote it meanwhile
    await completeRefund(trx, now, refundId, r.amount_minor, r.reason, r.actor_id, providerRefundId, true);
  });
}
