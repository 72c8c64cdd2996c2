/** Billing: the hold at booking, the charge for beam time at check-out, and how a quote becomes a charge. */
import { pgCode, PG, db, transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { quoteFor, type PricedQuote } from '@lib/server/prices';
import { breakdownOf, settle } from '@lib/pricing';
import { type Tier } from '@lib/vocabulary';
import { cardOf, getCharge, personFor, updateCharge, type Charge, type ChargeKind, type ChargeState } from './charge-records';
import { assertCanBook, placeHold, run } from './charge-runs';
import { assignReceipt, queueReceipt } from './receipts';

/**
 * At booking: estimates the price and holds it on the person's card (paid tiers). Returns null when no
 * hold is needed (recharge tier, nothing to pay, below the provider minimum). Throws 402 payment_required
 * when a card is needed and none is saved, or when the person owes a failed payment.
 */
export async function holdForBooking(input: { personId: string; machineId: string; bookingId: string; startsAt: Date; minutes: number }, mode: 'request' | 'intent' = 'request'): Promise<Charge | null> {
  await assertCanBook(input.personId);
  const person = await personFor(input.personId);
  const q = await quoteFor({ machineId: input.machineId, tier: person.tier, minutes: input.minutes, at: input.startsAt, personId: input.personId });
  if (q.rechargeTiers.includes(person.tier) && person.costCentre) return null;
  const s = settle(q.amountMinor, q.currency, q.minimumRule);
  if (s.chargeNowMinor === 0) return null;
  if (!(await cardOf(input.personId))) throw new DomainError('payment_required', 'payment_required', 'Save a card on your Account screen before booking paid time.');
  const [row] = await db()('charges')
    .insert({
      person_id: input.personId, tier: person.tier, machine_id: input.machineId, booking_id: input.bookingId, kind: 'beam_time', method: 'card',
      state: 'pending', currency: q.currency, amount_minor: q.amountMinor, tax_minor: q.taxMinor, card_amount_minor: s.chargeNowMinor,
      minutes: input.minutes, started_at: input.startsAt, price_version_id: q.priceVersionId, breakdown: JSON.stringify(breakdownOf(q, { estimate: true })),
      pending_op: 'hold',
    })
    .returning('id');
  return placeHold(row.id, mode);
}

export interface BeamTimeInput {
  personId: string;
  machineId: string;
  bookingId?: string | null;
  sessionId: string;
  startedAt: Date;
  minutes: number;
  materials?: { sku: string; quantity: number }[];
}

/**
 * At check-out: prices the session by the version in force when it started (daily cap per person, site
 * day), then recharges the cost centre, or captures the booking's hold (or charges the card), carrying
 * or waiving sums below the provider minimum. One charge per session: calling again returns the same one.
 */
export async function chargeBeamTime(input: BeamTimeInput, mode: 'request' | 'intent' = 'request'): Promise<Charge> {
  const existing = await db()('charges').where({ session_id: input.sessionId }).first('id');
  if (existing) return (await getCharge(existing.id))!;
  const person = await personFor(input.personId);
  // a checked-in session pays at least the minimum, even one of under a minute (billed 0 minutes)
  const q = await quoteFor({ machineId: input.machineId, tier: person.tier, minutes: input.minutes, at: input.startedAt, materials: input.materials, personId: input.personId, checkedIn: true });
  return billQuote(person, q, { kind: 'beam_time', machineId: input.machineId, bookingId: input.bookingId ?? null, sessionId: input.sessionId, startedAt: input.startedAt, minutes: input.minutes }, mode);
}

/** Bills a priced quote: a recharge, a capture of the booking's hold, or a new card charge (carried or waived when small). */
export async function billQuote(
  person: { id: string; tier: Tier; costCentre: string | null },
  q: PricedQuote,
  ctx: { kind: ChargeKind; machineId: string; bookingId: string | null; sessionId: string | null; startedAt: Date; minutes: number },
  mode: 'request' | 'intent' = 'request',
): Promise<Charge> {
  const recharge = q.rechargeTiers.includes(person.tier) && person.costCentre !== null;
  const base = {
    person_id: person.id, tier: person.tier, machine_id: ctx.machineId, booking_id: ctx.bookingId, session_id: ctx.sessionId, kind: ctx.kind,
    currency: q.currency, amount_minor: q.amountMinor, tax_minor: q.taxMinor, minutes: ctx.minutes, started_at: ctx.startedAt,
    price_version_id: q.priceVersionId,
  };
  if (recharge) {
    const id = await transaction(async (trx) => {
      const [row] = await trx('charges')
        .insert({ ...base, method: 'recharge', cost_centre: person.costCentre, state: 'recharged', breakdown: JSON.stringify(breakdownOf(q)) })
        .returning('id');
      await assignReceipt(trx, row.id);
      await queueReceipt(trx, (await getCharge(row.id, trx))!);
      return row.id as string;
    });
    return (await getCharge(id))!;
  }
  const carriedIn = Number((await db()('charges').where({ person_id: person.id, state: 'carried' }).sum({ s: 'amount_minor' }).first())?.s ?? 0);
  const s = settle(q.amountMinor, q.currency, q.minimumRule, carriedIn);
  const held = ctx.bookingId ? await db()('charges').where({ booking_id: ctx.bookingId, state: 'held', kind: 'beam_time' }).first('id') : undefined;
  const breakdown = JSON.stringify(breakdownOf(q, s.chargeNowMinor > 0 && carriedIn > 0 ? { carriedInMinor: carriedIn } : {}));
  const state: ChargeState = s.chargeNowMinor > 0 ? 'pending' : q.amountMinor === 0 || s.waivedMinor > 0 ? 'waived' : 'carried';
  let id: string;
  if (held && ctx.kind === 'beam_time') {
    id = held.id;
    if (s.chargeNowMinor > 0) {
      // the capture is written down before it is tried: a process that dies here leaves it for the job to finish
      await updateCharge(db(), id, { ...base, breakdown, method: 'card', state: 'pending', pending_op: `capture:${s.chargeNowMinor}` });
      return run(id, { op: 'capture', amountMinor: s.chargeNowMinor }, mode);
    }
    await updateCharge(db(), id, { ...base, breakdown, method: 'card' });
    if (s.chargeNowMinor === 0) {
      await run(id, { op: 'capture', amountMinor: 0 }, mode);
      await updateCharge(db(), id, { state });
      return (await getCharge(id))!;
    }
    return run(id, { op: 'capture', amountMinor: s.chargeNowMinor }, mode);
  }
  let row: { id: string } | undefined;
  try {
    [row] = await db()('charges')
      .insert({ ...base, method: 'card', state, card_amount_minor: s.chargeNowMinor, breakdown, pending_op: s.chargeNowMinor > 0 ? `charge:${s.chargeNowMinor}` : null })
      .returning('id');
  } catch (err) {
    // the same session checked out twice at once: the other call made the charge
    if (pgCode(err) === PG.uniqueViolation && ctx.sessionId) {
      const other = await db()('charges').where({ session_id: ctx.sessionId }).first('id');
      if (other) return (await getCharge(other.id))!;
    }
    throw err;
  }
  id = row!.id;
  if (s.chargeNowMinor === 0) return (await getCharge(id))!;
  return run(id, { op: 'charge', amountMinor: s.chargeNowMinor }, mode);
}
