/**
 * Charges: our `charges` table is the record of what is owed; this module reads and writes its rows.
 *
 * Charge states:
 *   pending          — written, the provider call is under way
 *   queued           — the provider was unreachable; a pg-boss job retries `pending_op` with the same key
 *   held             — authorised (capture: false), not yet taken
 *   captured         — paid (refunded_minor may be > 0 after a partial refund)
 *   released         — a hold let go; nothing taken
 *   payment failed   — declined, or no card to charge: on the balance owed; new bookings refused (402)
 *   refunded         — fully refunded
 *   recharged        — billed to a cost centre (internal recharge), no card
 *   carried          — below the provider's minimum: on the balance owed, charged with a later charge
 *   waived           — below the provider's minimum with the "waive" rule, or nothing to pay
 *   settled          — a failed or carried charge paid later as part of another charge (settled_by)
 */
import type { Knex } from 'knex';
import type { ChargeShown } from '@lib/account-views';
import type { Breakdown } from '@lib/pricing';
import type { ChargeKind, ChargeState, Tier } from '@lib/vocabulary';
import { db, type Conn } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';

export type { ChargeKind, ChargeState } from '@lib/vocabulary';

export interface Charge extends ChargeShown {
  personId: string;
  personName?: string;
  personEmail?: string;
  machineId: string | null;
  bookingId: string | null;
  sessionId: string | null;
  cardAmountMinor: number;
  heldMinor: number;
  priceVersionId: string | null;
  breakdown: Breakdown;
  providerChargeId: string | null;
  /** when the money was taken (or recharged): the receipt's date */
  chargedAt: Date | null;
  receiptNumber: string | null;
  updatedAt: Date;
}

export type { Breakdown };

export function toCharge(r: Record<string, any>): Charge {
  return {
    id: r.id,
    personId: r.person_id,
    personName: r.person_name,
    personEmail: r.person_email,
    machineId: r.machine_id,
    machineName: r.machine_name ?? null,
    bookingId: r.booking_id,
    sessionId: r.session_id,
    kind: r.kind,
    method: r.method,
    costCentre: r.cost_centre,
    state: r.state,
    currency: r.currency,
    amountMinor: r.amount_minor,
    taxMinor: r.tax_minor,
    cardAmountMinor: r.card_amount_minor,
    heldMinor: r.held_minor,
    capturedMinor: r.captured_minor,
    refundedMinor: r.refunded_minor,
    minutes: r.minutes,
    startedAt: r.started_at,
    priceVersionId: r.price_version_id,
    breakdown: r.breakdown,
    providerChargeId: r.provider_charge_id,
    failureMessage: r.failure_message,
    chargedAt: r.charged_at ?? null,
    receiptNumber: r.receipt_number ?? null,
    createdAt: r.created_at,
    updatedAt: r.updated_at,
  };
}

export function chargeQuery(trx: Conn = db()) {
  return trx('charges as c')
    .leftJoin('machines as m', 'm.id', 'c.machine_id')
    .leftJoin('people as p', 'p.id', 'c.person_id')
    .select('c.*', 'm.name as machine_name', 'p.name as person_name', 'p.email as person_email');
}

export async function getCharge(id: string, trx: Conn = db()): Promise<Charge | null> {
  const r = await chargeQuery(trx).where('c.id', id).first();
  return r ? toCharge(r) : null;
}

export async function lockCharge(trx: Knex.Transaction, id: string): Promise<Charge> {
  await trx('charges').where({ id }).forUpdate().first('id');
  const c = await getCharge(id, trx);
  if (!c) throw new DomainError('not_found', 'not_found', 'No charge has that id.');
  return c;
}

export async function updateCharge(trx: Conn, id: string, patch: Record<string, unknown>): Promise<void> {
  await trx('charges').where({ id }).update({ ...patch, updated_at: trx.fn.now() });
}

/** The payer: who the charge is for, their tier and cost centre. */
export async function personFor(personId: string, trx: Conn = db()): Promise<{ id: string; email: string; name: string; tier: Tier; costCentre: string | null }> {
  const p = await trx('people').where({ id: personId }).first('id', 'email', 'name', 'tier', 'cost_centre');
  if (!p) throw new DomainError('not_found', 'not_found', 'No person has that id.');
  return { id: p.id, email: p.email, name: p.name, tier: p.tier, costCentre: p.cost_centre };
}

/** The saved card of a person, when there is one. */
export async function cardOf(personId: string, trx: Conn = db()): Promise<{ customerId: string; sourceId: string } | null> {
  const row = await trx('payment_customers').where({ person_id: personId }).first('provider_customer_id', 'card_source_id');
  return row?.card_source_id ? { customerId: row.provider_customer_id, sourceId: row.card_source_id } : null;
}
