/**
 * Payments: our `charges` table is the record of what is owed; this module is the ONLY place that talks
 * to the payment provider (the Stripe SDK; stripe-stateful-mock locally). Card path: customers + sources
 * + charges (PaymentIntents are not in the local fake).
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
 *
 * Every provider call carries an idempotency key built from our charge id and the operation, so a retry
 * (the worker, a second click, a lost answer) never takes money twice.
 */
import { AsyncLocalStorage } from 'node:async_hooks';
import { createHash, randomUUID } from 'node:crypto';
import Stripe from 'stripe';
import type { Knex } from 'knex';
import { majorUnits, toCsv } from '../csv';
import { zonedDate } from '../time';
import { db, holdingAConnection, pgCode, PG, transaction } from './db';
import { env } from './env';
import { recordPaymentIntent, type PaymentIntent } from './payment-intents';
export { heldOnBookings } from './payment-intents';
import { activeWithRole } from './people';
import { log } from './log';
import { queueMail } from './mail';
import { recordAudit } from './audit';
import { HttpError } from './errors';
import { getSettings } from './settings';
import { quoteFor, zonedMidnight, type PricedQuote } from './prices';
import { breakdownOf, formatMoney, settle, type Breakdown, type Tier } from '../pricing';
import { formatReceiptNumber, receiptPrefix } from '../receipts';

// ---------------------------------------------------------------------------------------------
// The provider client

let client: Stripe | undefined;
let quickClient: Stripe | undefined;
/** Set while a request makes its one try at once: provider calls give up sooner, the job does the rest. */
const quick = new AsyncLocalStorage<boolean>();
/** How long the worker, and a request's one try, wait for the provider's answer. */
export const PROVIDER_TIMEOUT_MS = { worker: 10_000, request: 3_000 } as const;

function provider(): Stripe {
  const make = (timeout: number) => {
    const c = new Stripe(env().STRIPE_SECRET_KEY, {
      ...apiAddress(),
      // retries are ours (pg-boss), with the same idempotency key
      maxNetworkRetries: 0,
      timeout,
    });
    // one line per provider call: method, path, status and time; never the key, the body or card details
    c.on('response', (r: Stripe.ResponseEvent) => {
      log.info({ event: 'provider_call', provider: 'payments', method: r.method, path: r.path, status: r.status, durationMs: r.elapsed, providerRequestId: r.request_id }, 'payment provider call');
    });
    return c;
  };
  if (quick.getStore()) return (quickClient ??= make(PROVIDER_TIMEOUT_MS.request));
  return (client ??= make(PROVIDER_TIMEOUT_MS.worker));
}

/** STRIPE_API_BASE (a URL) when set, else the host, port and protocol of the local fake. */
function apiAddress(): { host: string; port: number; protocol: 'http' | 'https' } {
  const e = env();
  if (e.STRIPE_API_BASE) {
    const u = new URL(e.STRIPE_API_BASE);
    const protocol = u.protocol === 'http:' ? 'http' : 'https';
    return { host: u.hostname, port: u.port ? Number(u.port) : protocol === 'https' ? 443 : 80, protocol };
  }
  return { host: e.STRIPE_API_HOST, port: e.STRIPE_API_PORT, protocol: e.STRIPE_API_PROTOCOL };
}

type ProviderError = { type?: string; code?: string; message?: string; statusCode?: number };

function classify(err: unknown): 'card' | 'unreachable' | 'missing' | 'other' {
  const e = err as ProviderError;
  if (e?.type === 'StripeCardError') return 'card';
  if (e?.type === 'StripeConnectionError' || e?.type === 'StripeAPIError' || e?.type === 'StripeRateLimitError') return 'unreachable';
  if (typeof e?.statusCode === 'number' && e.statusCode >= 500) return 'unreachable';
  if (e?.code === 'resource_missing') return 'missing';
  return 'other';
}

const key = (chargeId: string, op: string) => `beamwarden-charge-${chargeId}-${op}`;

/** Verifies a provider webhook signature; throws HttpError 400 when it does not match. */
function verifyWebhook(body: string, signature: string | null): { id: string; type: string; data: { object: Record<string, unknown> } } {
  if (!signature) throw new HttpError(400, 'bad_signature', 'The webhook signature header is missing.');
  try {
    return provider().webhooks.constructEvent(body, signature, env().STRIPE_WEBHOOK_SECRET) as never;
  } catch {
    throw new HttpError(400, 'bad_signature', 'The webhook signature does not match.');
  }
}

// ---------------------------------------------------------------------------------------------
// Records

export type ChargeState =
  | 'pending' | 'queued' | 'held' | 'captured' | 'released' | 'payment failed' | 'refunded' | 'recharged' | 'carried' | 'waived' | 'settled'
  | 'refund pending';
export type ChargeKind = 'beam_time' | 'late_cancellation' | 'no_show';

export interface Charge {
  id: string;
  personId: string;
  personName?: string;
  personEmail?: string;
  machineId: string | null;
  machineName: string | null;
  bookingId: string | null;
  sessionId: string | null;
  kind: ChargeKind;
  method: 'card' | 'recharge';
  costCentre: string | null;
  state: ChargeState;
  currency: string;
  amountMinor: number;
  taxMinor: number;
  cardAmountMinor: number;
  heldMinor: number;
  capturedMinor: number;
  refundedMinor: number;
  minutes: number | null;
  startedAt: Date | null;
  priceVersionId: string | null;
  breakdown: Breakdown;
  providerChargeId: string | null;
  failureMessage: string | null;
  /** when the money was taken (or recharged): the receipt's date */
  chargedAt: Date | null;
  receiptNumber: string | null;
  createdAt: Date;
  updatedAt: Date;
}

export type { Breakdown };

function toCharge(r: Record<string, any>): Charge {
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

function chargeQuery(trx: Knex | Knex.Transaction = db()) {
  return trx('charges as c')
    .leftJoin('machines as m', 'm.id', 'c.machine_id')
    .leftJoin('people as p', 'p.id', 'c.person_id')
    .select('c.*', 'm.name as machine_name', 'p.name as person_name', 'p.email as person_email');
}

export async function getCharge(id: string, trx: Knex | Knex.Transaction = db()): Promise<Charge | null> {
  const r = await chargeQuery(trx).where('c.id', id).first();
  return r ? toCharge(r) : null;
}

async function lockCharge(trx: Knex.Transaction, id: string): Promise<Charge> {
  await trx('charges').where({ id }).forUpdate().first('id');
  const c = await getCharge(id, trx);
  if (!c) throw new HttpError(404, 'charge_not_found', 'No charge has that id.');
  return c;
}

async function update(trx: Knex | Knex.Transaction, id: string, patch: Record<string, unknown>): Promise<void> {
  await trx('charges').where({ id }).update({ ...patch, updated_at: trx.fn.now() });
}

// ---------------------------------------------------------------------------------------------
// Customers and cards

export interface SavedCard {
  brand: string;
  last4: string;
}

async function personFor(personId: string, trx: Knex | Knex.Transaction = db()): Promise<{ id: string; email: string; name: string; tier: Tier; costCentre: string | null }> {
  const p = await trx('people').where({ id: personId }).first('id', 'email', 'name', 'tier', 'cost_centre');
  if (!p) throw new HttpError(404, 'person_not_found', 'No person has that id.');
  return { id: p.id, email: p.email, name: p.name, tier: p.tier, costCentre: p.cost_centre };
}

/** The person's customer at the provider, created on first use (and again if the provider lost it). */
export async function ensureCustomer(personId: string): Promise<string> {
  const person = await personFor(personId);
  const row = await db()('payment_customers').where({ person_id: personId }).first();
  if (row) {
    try {
      const c = await provider().customers.retrieve(row.provider_customer_id);
      if (!(c as { deleted?: boolean }).deleted) return row.provider_customer_id;
    } catch (err) {
      if (classify(err) === 'unreachable') throw unreachable();
      if (classify(err) !== 'missing') throw err;
    }
  }
  let created;
  try {
    created = await provider().customers.create(
      { email: person.email, name: person.name, metadata: { personId } },
      { idempotencyKey: `beamwarden-person-${personId}-customer-${row?.provider_customer_id ?? 'first'}` },
    );
  } catch (err) {
    if (classify(err) === 'unreachable') throw unreachable();
    throw err;
  }
  await db()('payment_customers')
    .insert({ person_id: personId, provider_customer_id: created.id })
    .onConflict('person_id')
    .merge({ provider_customer_id: created.id, card_source_id: null, card_brand: null, card_last4: null, updated_at: db().fn.now() });
  return created.id;
}

const unreachable = () => new HttpError(503, 'provider_unreachable', 'The card service cannot be reached just now. Try again in a minute.');

/**
 * Saves a card (a provider token) as the person's default source. Then any charge left `payment failed`
 * or `carried` is retried on the new card. Card errors → 402 card_declined.
 */
export async function saveCard(personId: string, token: string): Promise<{ card: SavedCard; settled: number }> {
  const customerId = await ensureCustomer(personId);
  let source: { id: string; brand?: string; last4?: string };
  try {
    const tokenHash = createHash('sha256').update(token).digest('hex').slice(0, 16);
    source = (await provider().customers.createSource(
      customerId,
      { source: token },
      { idempotencyKey: `beamwarden-person-${personId}-card-${customerId}-${tokenHash}` },
    )) as never;
    await provider().customers.update(customerId, { default_source: source.id }, { idempotencyKey: `beamwarden-person-${personId}-default-${source.id}` });
  } catch (err) {
    const kind = classify(err);
    if (kind === 'card') throw new HttpError(402, 'card_declined', `The card was declined: ${(err as ProviderError).message ?? 'no reason given'}. Try another card.`);
    if (kind === 'unreachable') throw unreachable();
    if (kind === 'missing' || (err as ProviderError).type === 'StripeInvalidRequestError') {
      throw new HttpError(422, 'invalid', 'The card details were not accepted.', { token: (err as ProviderError).message ?? 'Not a card token.' });
    }
    throw err;
  }
  const card = { brand: source.brand ?? 'Card', last4: source.last4 ?? '????' };
  await transaction(async (trx) => {
    await trx('payment_customers').where({ person_id: personId }).update({
      card_source_id: source.id, card_brand: card.brand, card_last4: card.last4, updated_at: trx.fn.now(),
    });
    await recordAudit(trx, { actorId: personId, kind: 'card.saved', subjectType: 'person', subjectId: personId, summary: `Saved a card (${card.brand} •••• ${card.last4})` });
  });
  const settled = await settleOwed(personId);
  return { card, settled };
}

export async function savedCard(personId: string): Promise<SavedCard | null> {
  const row = await db()('payment_customers').where({ person_id: personId }).first('card_brand', 'card_last4', 'card_source_id');
  return row?.card_source_id ? { brand: row.card_brand, last4: row.card_last4 } : null;
}

async function cardOf(personId: string, trx: Knex | Knex.Transaction = db()): Promise<{ customerId: string; sourceId: string } | null> {
  const row = await trx('payment_customers').where({ person_id: personId }).first('provider_customer_id', 'card_source_id');
  return row?.card_source_id ? { customerId: row.provider_customer_id, sourceId: row.card_source_id } : null;
}

// ---------------------------------------------------------------------------------------------
// Provider operations on one charge (each with its own idempotency key)

type Op = { op: 'hold' } | { op: 'charge'; amountMinor: number } | { op: 'capture'; amountMinor: number };

const opText = (o: Op) => (o.op === 'hold' ? 'hold' : `${o.op}:${o.amountMinor}`);
function parseOp(s: string): Op | null {
  if (s === 'hold') return { op: 'hold' };
  const m = /^(charge|capture):(\d+)$/.exec(s);
  return m ? ({ op: m[1] as 'charge' | 'capture', amountMinor: Number(m[2]) } as Op) : null;
}

/**
 * Runs an operation. On an unreachable provider the charge is `queued` with its operation kept; in mode 'request'
 * an intent is recorded so the worker retries it, in mode 'intent' (the worker running an intent, or a request's
 * one try of it) the intent's own job retries. Returns the charge after.
 */
async function run(chargeId: string, op: Op, mode: 'request' | 'intent' = 'request'): Promise<Charge> {
  const c = await getCharge(chargeId);
  if (!c) throw new HttpError(404, 'charge_not_found', 'No charge has that id.');
  try {
    await perform(c, op);
  } catch (err) {
    const kind = classify(err);
    if (kind === 'card') {
      await markFailed(c, (err as ProviderError).code ?? 'card_declined', (err as ProviderError).message ?? 'The card was declined.');
    } else if (kind === 'unreachable') {
      await transaction(async (trx) => {
        await update(trx, c.id, { state: 'queued', pending_op: opText(op), failure_message: `Waiting for the card service: ${(err as ProviderError).message ?? 'no answer'}` });
        if (mode === 'request') await recordPaymentIntent(trx, { kind: 'charge', chargeId: c.id });
      });
    } else if (kind === 'missing' && op.op !== 'capture') {
      // the provider no longer knows the saved customer or card (deleted there): a stale record, not a decline.
      // Forget it, so the person is asked for a card again; nothing is left pending.
      await db()('payment_customers').where({ person_id: c.personId }).delete();
      const message = 'The payment provider no longer knows your saved card. Save a card again on the Account screen.';
      if (op.op === 'hold') await update(db(), c.id, { state: 'released', held_minor: 0, pending_op: null, failure_code: 'card_missing', failure_message: message });
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
        await update(trx, c.id, { state: 'held', held_minor: amount, provider_charge_id: ch.id, pending_op: null, failure_code: null, failure_message: null });
      } else {
        await update(trx, c.id, { state: 'captured', held_minor: 0, captured_minor: amount, card_amount_minor: amount, provider_charge_id: ch.id, pending_op: null, failure_code: null, failure_message: null });
        await afterCaptured(trx, c.id);
      }
    });
    return;
  }
  // capture a hold
  if (!c.providerChargeId) throw new Error(`charge ${c.id} has no hold to capture`);
  if (op.amountMinor === 0) {
    await p.refunds.create({ charge: c.providerChargeId }, { idempotencyKey: key(c.id, 'release') });
    await update(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    return;
  }
  if (op.amountMinor > c.heldMinor) {
    await perform(c, { op: 'charge', amountMinor: op.amountMinor });
    return;
  }
  await p.charges.capture(c.providerChargeId, { amount: op.amountMinor }, { idempotencyKey: key(c.id, `capture-${op.amountMinor}`) });
  await transaction(async (trx) => {
    await update(trx, c.id, { state: 'captured', held_minor: 0, captured_minor: op.amountMinor, card_amount_minor: op.amountMinor, pending_op: null, failure_code: null, failure_message: null });
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

async function markFailed(c: Charge, code: string, message: string): Promise<void> {
  await transaction(async (trx) => {
    await update(trx, c.id, { state: 'payment failed', pending_op: null, failure_code: code, failure_message: message, held_minor: 0 });
    const p = await personFor(c.personId, trx);
    await queueMail(trx, p.email, 'Payment failed', {
      greeting: `Kia ora ${p.name},`,
      paragraphs: [
        `We could not take ${formatMoney(c.cardAmountMinor || c.amountMinor, c.currency)} for ${c.kind.replace('_', ' ')}${c.machineName ? ` on ${c.machineName}` : ''}: ${message}`,
        'Until it is settled, new bookings are paused. Save a working card on your Account screen and we will try again straight away.',
      ],
      action: { label: 'Open your Account', url: `${env().PUBLIC_BASE_URL}/account` },
    });
    await recordAudit(trx, { actorId: null, kind: 'charge.failed', subjectType: 'charge', subjectId: c.id, summary: `Payment failed for ${p.name}: ${message}` });
  });
}

/**
 * Dates the receipt (now: when the money is taken) and gives it the next number of the year in the site's zone:
 * one upsert on the year's counter, whose row lock makes concurrent charges take turns (no number given twice).
 */
async function assignReceipt(trx: Knex.Transaction, chargeId: string): Promise<void> {
  const row = await trx('charges').where({ id: chargeId }).forUpdate().first('receipt_number');
  if (!row || row.receipt_number) return;
  const { name, timeZone } = await getSettings();
  const now = new Date();
  const year = Number(new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric' }).format(now));
  const r = await trx.raw(
    'INSERT INTO receipt_counters (year, last_number) VALUES (?, 1) ON CONFLICT (year) DO UPDATE SET last_number = receipt_counters.last_number + 1 RETURNING last_number',
    [year],
  );
  const n = Number((r as { rows: { last_number: number }[] }).rows[0]!.last_number);
  await update(trx, chargeId, { receipt_number: formatReceiptNumber(receiptPrefix(name), year, n), charged_at: now });
}

async function queueReceipt(trx: Knex.Transaction, c: Charge): Promise<void> {
  const p = await personFor(c.personId, trx);
  const lines = c.breakdown.lines.map((l) => `${l.label}: ${formatMoney(l.amountMinor, c.currency)}`);
  if (c.breakdown.carriedInMinor) lines.push(`Earlier small sums carried to this charge: ${formatMoney(c.breakdown.carriedInMinor, c.currency)}`);
  const tax = `${c.breakdown.taxMode === 'inclusive' ? 'Includes' : 'Plus'} ${c.breakdown.taxRateBp / 100} % tax: ${formatMoney(c.breakdown.taxMinor, c.currency)}`;
  const paid = c.method === 'recharge' ? `Billed to cost centre ${c.costCentre}` : `Paid by card: ${formatMoney(c.capturedMinor, c.currency)}`;
  await queueMail(trx, p.email, `Receipt: ${formatMoney(c.amountMinor, c.currency)}`, {
    greeting: `Kia ora ${p.name},`,
    paragraphs: [...(c.receiptNumber ? [`Receipt ${c.receiptNumber}`] : []), ...lines, tax, `Total: ${formatMoney(c.amountMinor, c.currency)}`, paid],
    action: { label: 'Printable receipt', url: `${env().PUBLIC_BASE_URL}/account/receipts/${c.id}` },
  });
}

/** Worker entry point of the older `payments.retry` jobs: the queued operation of a charge, same idempotency key. */
export async function retryQueuedCharge(chargeId: string): Promise<void> {
  await drive(chargeId);
}

class ProviderNotReady extends Error {}

/**
 * Runs the operation a charge is waiting for (state `pending` or `queued`, kept in `pending_op`), with the same
 * idempotency key as every earlier try. Throws while the provider still cannot be reached, so the job retries.
 */
async function drive(chargeId: string): Promise<Charge | null> {
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

// ---------------------------------------------------------------------------------------------
// What other areas call

/** Places the hold (capture: false) for a charge row in state `pending`. Idempotent. */
export async function placeHold(chargeId: string): Promise<Charge> {
  const c = await getCharge(chargeId);
  if (!c) throw new HttpError(404, 'charge_not_found', 'No charge has that id.');
  if (c.state !== 'pending') return c;
  return run(chargeId, { op: 'hold' });
}

/** Takes `amountMinor` from a held charge (releasing and charging anew when it is higher than the hold). */
export async function capture(chargeId: string, amountMinor: number): Promise<Charge> {
  const c = await getCharge(chargeId);
  if (!c) throw new HttpError(404, 'charge_not_found', 'No charge has that id.');
  if (c.state !== 'held') return c;
  return run(chargeId, { op: 'capture', amountMinor });
}

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
  if (!(await cardOf(input.personId))) throw new HttpError(402, 'payment_required', 'Save a card on your Account screen before booking paid time.');
  const [row] = await db()('charges')
    .insert({
      person_id: input.personId, tier: person.tier, machine_id: input.machineId, booking_id: input.bookingId, kind: 'beam_time', method: 'card',
      state: 'pending', currency: q.currency, amount_minor: q.amountMinor, tax_minor: q.taxMinor, card_amount_minor: s.chargeNowMinor,
      minutes: input.minutes, started_at: input.startsAt, price_version_id: q.priceVersionId, breakdown: JSON.stringify(breakdownOf(q, { estimate: true })),
      pending_op: 'hold',
    })
    .returning('id');
  return mode === 'intent' ? run(row.id, { op: 'hold' }, 'intent') : placeHold(row.id);
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

async function billQuote(
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
      await update(db(), id, { ...base, breakdown, method: 'card', state: 'pending', pending_op: `capture:${s.chargeNowMinor}` });
      return run(id, { op: 'capture', amountMinor: s.chargeNowMinor }, mode);
    }
    await update(db(), id, { ...base, breakdown, method: 'card' });
    if (s.chargeNowMinor === 0) {
      await run(id, { op: 'capture', amountMinor: 0 }, mode);
      await update(db(), id, { state });
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
      try {
        await provider().refunds.create({ charge: c.providerChargeId }, { idempotencyKey: key(c.id, 'release') });
      } catch (err) {
        if (classify(err) === 'unreachable') throw unreachable();
        throw err;
      }
      await update(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    } else if (c.state === 'queued' && parseOp((await db()('charges').where({ id: c.id }).first('pending_op'))?.pending_op ?? '')?.op === 'hold') {
      // an earlier try may have reached the provider before the answer was lost: finish it with the same key,
      // then let it go, so no hold is left behind at the provider
      const now = await drive(c.id).catch((err) => {
        if (err instanceof ProviderNotReady) throw unreachable();
        throw err;
      });
      if (now?.state === 'held' && now.providerChargeId) {
        try {
          await provider().refunds.create({ charge: now.providerChargeId }, { idempotencyKey: key(c.id, 'release') });
        } catch (err) {
          if (classify(err) === 'unreachable') throw unreachable();
          throw err;
        }
      }
      await update(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    } else if (c.state === 'pending' || c.state === 'queued') {
      await update(db(), c.id, { state: 'released', held_minor: 0, pending_op: null });
    } else if (c.state === 'captured' && c.capturedMinor > c.refundedMinor) {
      await refund(c.id, c.capturedMinor - c.refundedMinor, reason, opts.actorId ?? null, { notify: false });
    }
    done.push((await getCharge(c.id))!);
  }
  if (done.length && opts.notify !== false) {
    const p = await personFor(done[0]!.personId);
    await queueMail(null, p.email, 'Your booking was released: no charge', {
      greeting: `Kia ora ${p.name},`,
      paragraphs: [`Your booking could not go ahead (${reason}). Any hold on your card has been released and anything taken has been refunded. You are not charged for time the space could not give.`],
      action: { label: 'Open your Account', url: `${env().PUBLIC_BASE_URL}/account` },
    });
  }
  return done;
}

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
      throw new HttpError(409, 'not_refundable', c.state === 'refund pending' ? 'A refund of this charge is already waiting for the card service; it completes by itself.' : `A charge in state "${c.state}" cannot be refunded.`);
    }
    const left = paid - c.refundedMinor;
    if (amountMinor < 1 || amountMinor > left) {
      throw new HttpError(422, 'invalid', `Refund between 1 and ${left} minor units.`, { amountMinor: `At most ${formatMoney(left, c.currency)} is left to refund.` });
    }
    const card = c.method === 'card' && c.providerChargeId !== null;
    await trx('charge_refunds').insert({
      id: refundId, charge_id: c.id, amount_minor: amountMinor, reason, actor_id: actorId,
      state: card ? 'pending' : 'done', completed_at: card ? null : trx.fn.now(),
    });
    if (card) {
      await update(trx, c.id, { state: 'refund pending', failure_message: null });
      await recordPaymentIntent(trx, { kind: 'refund', refundId });
      await recordAudit(trx, {
        actorId, kind: 'charge.refund_requested', subjectType: 'charge', subjectId: c.id,
        summary: `Refund of ${formatMoney(amountMinor, c.currency)} of ${formatMoney(paid, c.currency)} to ${c.personName} asked for: ${reason}`,
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
  await update(trx, c.id, { refunded_minor: refunded, state, failure_message: null });
  await recordAudit(trx, {
    actorId,
    kind: 'charge.refunded',
    subjectType: 'charge',
    subjectId: c.id,
    summary: `Refunded ${formatMoney(amountMinor, c.currency)} of ${formatMoney(paid, c.currency)} to ${c.personName}: ${reason}`,
    before: { state: c.state, refundedMinor: c.refundedMinor },
    after: { state, refundedMinor: refunded },
  });
  if (notify) {
    await queueMail(trx, c.personEmail!, `Refund: ${formatMoney(amountMinor, c.currency)}`, {
      greeting: `Kia ora ${c.personName},`,
      paragraphs: [`We refunded ${formatMoney(amountMinor, c.currency)} of your charge of ${formatMoney(c.amountMinor, c.currency)}. Reason: ${reason}`,
        c.method === 'card' ? 'Card refunds usually show on your statement within 5–10 days.' : `The refund is credited to cost centre ${c.costCentre}.`],
    });
  }
}

/** Makes a pending refund at the provider (same key on every try) and writes it done. Throws while the provider cannot be reached. */
async function runRefund(refundId: string): Promise<void> {
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

/**
 * Refunds now as far as the provider allows: records the refund and tries it once. Returns the charge, which reads
 * `refund pending` while the provider is unreachable (the worker completes it later, exactly once).
 */
export async function refund(chargeId: string, amountMinor: number, reason: string, actorId: string | null, opts: { notify?: boolean } = {}): Promise<Charge> {
  const r = await requestRefund(chargeId, amountMinor, reason, actorId, opts);
  if (r.pending) await tryIntentNow({ kind: 'refund', refundId: r.refundId });
  return (await getCharge(chargeId))!;
}

// ---------------------------------------------------------------------------------------------
// Intents (payment-intents.ts): run by the worker, tried once at once by the request that recorded them

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
    await trx.raw(`SET LOCAL lock_timeout = '${Math.round(waitSeconds)}s'`);
    await trx.raw('SELECT pg_advisory_xact_lock(hashtextextended(?, 0))', [lockKey(i)]);
    return work();
  });
}

async function bookingRow(id: string): Promise<{ id: string; person_id: string; machine_id: string; kind: string; state: string; starts_at: Date; ends_at: Date } | undefined> {
  return db()('bookings').where({ id }).first('id', 'person_id', 'machine_id', 'kind', 'state', 'starts_at', 'ends_at');
}

/** The hold of a booking: made once (the charge row first, its operation written down), then placed or resumed. */
async function holdBooking(bookingId: string): Promise<void> {
  const b = await bookingRow(bookingId);
  if (!b || b.kind !== 'personal' || !['reserved', 'checked in'].includes(b.state)) return; // cancelled before the hold: nothing to hold
  const made = await db()('charges').where({ booking_id: bookingId, kind: 'beam_time' }).orderBy('created_at').first('id');
  if (made) {
    await drive(made.id);
    return;
  }
  try {
    await holdForBooking({ personId: b.person_id, machineId: b.machine_id, bookingId, startsAt: b.starts_at, minutes: Math.round((b.ends_at.getTime() - b.starts_at.getTime()) / 60_000) }, 'intent');
  } catch (err) {
    // no card saved, or a failed payment: nothing is held, beam time is charged at check-out
    if (err instanceof HttpError && err.status === 402) return;
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
    if (err instanceof HttpError && err.status < 500) {
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
export async function tryIntentNow(i: PaymentIntent): Promise<HttpError | null> {
  try {
    // the intent lock holds a connection while the work asks for others: at most half the pool does that at once
    await quick.run(true, () => holdingAConnection(() => withIntentLock(i, 4, () => runIntentNow(i))));
    return null;
  } catch (err) {
    if (err instanceof HttpError && err.status < 500) return err;
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
      await queueMail(null, a.email, subject, { greeting: `Kia ora ${a.name},`, paragraphs, action: { label: 'Open Reconciliation', url: `${env().PUBLIC_BASE_URL}/admin/reconciliation` } });
    }
  };
  if (i.kind === 'refund') {
    const r = await db()('charge_refunds').where({ id: i.refundId }).first();
    if (!r || r.state !== 'pending') return;
    const c = (await getCharge(r.charge_id))!;
    await transaction(async (trx) => {
      await trx('charge_refunds').where({ id: i.refundId }).update({ state: 'failed', failure_message: why });
      await update(trx, c.id, { state: 'captured', failure_message: `A refund of ${formatMoney(r.amount_minor, c.currency)} failed: ${why}` });
      await recordAudit(trx, { actorId: null, kind: 'charge.refund_failed', subjectType: 'charge', subjectId: c.id, summary: `Refund of ${formatMoney(r.amount_minor, c.currency)} to ${c.personName} failed: ${why}` });
      await queueMail(trx, c.personEmail!, `Refund delayed: ${formatMoney(r.amount_minor, c.currency)}`, {
        greeting: `Kia ora ${c.personName},`,
        paragraphs: [`We could not yet refund ${formatMoney(r.amount_minor, c.currency)} to your card. The space's admins have been told and will settle it with you.`],
      });
    });
    await admins(`Refund failed for ${c.personName}`, [`A refund of ${formatMoney(r.amount_minor, c.currency)} on charge ${c.id} failed for good. ${why}`, 'Try it again from the charge, or settle it by hand.']);
    return;
  }
  const ids: string[] = [];
  if (i.kind === 'charge') ids.push(i.chargeId);
  else if (i.kind === 'session.charge') ids.push(...(await db()('charges').where({ session_id: i.sessionId }).pluck('id')));
  else ids.push(...(await db()('charges').where({ booking_id: i.bookingId }).pluck('id')));
  for (const id of ids) {
    const c = (await getCharge(id))!;
    if (i.kind === 'booking.release') {
      if (c.state === 'held') await admins(`A card hold could not be released for ${c.personName}`, [`The hold of ${formatMoney(c.heldMinor, c.currency)} on charge ${c.id} could not be released. ${why}`, 'Release it at the provider by hand.']);
      continue;
    }
    if (c.state !== 'pending' && c.state !== 'queued') continue;
    await markFailed(c, 'provider_unreachable', why);
    await admins(`Payment failed for ${c.personName}`, [`Charge ${c.id} (${formatMoney(c.cardAmountMinor || c.amountMinor, c.currency)}) is marked payment failed. ${why}`]);
  }
}

/** What the person sees of a booking's card hold just after booking. */
export async function bookingHoldNotice(bookingId: string, personId: string, refusal: HttpError | null): Promise<{ state: 'held' | 'hold pending' | 'none'; notice: string | null }> {
  if (refusal?.code === 'not_priced') return { state: 'none', notice: 'This machine has no price for your tier yet, so nothing is held now; your booking stands.' };
  const c = await db()('charges').where({ booking_id: bookingId, kind: 'beam_time' }).orderBy('created_at', 'desc').first('state', 'failure_message');
  if (!c) {
    const summary = await accountSummary(personId);
    if (!summary.card && !summary.recharge) {
      return { state: 'none', notice: 'No card is saved on your account, so nothing is held now: beam time is charged at check-out. Save a card on the Account screen to pay by card.' };
    }
    return { state: 'none', notice: null };
  }
  if (c.state === 'held') return { state: 'held', notice: null };
  if (c.state === 'pending' || c.state === 'queued') return { state: 'hold pending', notice: 'The card service is not answering just now: the hold is retried by itself and your booking stands.' };
  if (c.state === 'released' && c.failure_message) return { state: 'none', notice: `${c.failure_message} Nothing is held now; beam time is charged at check-out.` };
  return { state: 'none', notice: null };
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
  if (failed) throw new HttpError(402, 'payment_required', 'A payment failed on this account. Save a working card on the Account screen to settle it, then book again.');
}

// ---------------------------------------------------------------------------------------------
// Account and reports

export interface AccountSummary {
  tier: Tier;
  costCentre: string | null;
  recharge: boolean;
  card: SavedCard | null;
  currency: string;
  balanceOwedMinor: number;
  failed: number;
}

export async function accountSummary(personId: string): Promise<AccountSummary> {
  const person = await personFor(personId);
  const { currency } = await getSettings();
  const owed = await db()('charges').where({ person_id: personId }).whereIn('state', ['payment failed', 'carried'])
    .select(db().raw('coalesce(sum(amount_minor), 0)::int as owed'), db().raw("count(*) filter (where state = 'payment failed')::int as failed")).first();
  const v = await db()('price_versions').where('effective_from', '<=', new Date()).orderBy('effective_from', 'desc').first('recharge_tiers');
  return {
    tier: person.tier,
    costCentre: person.costCentre,
    recharge: Boolean(person.costCentre && (v?.recharge_tiers ?? []).includes(person.tier)),
    card: await savedCard(personId),
    currency,
    balanceOwedMinor: Number(owed?.owed ?? 0),
    failed: Number(owed?.failed ?? 0),
  };
}

export type ChargeSort = 'date' | 'amount' | 'state' | 'machine';

export async function listCharges(personId: string | null, opts: { page: number; pageSize: number; sort: ChargeSort; dir: 'asc' | 'desc' }): Promise<{ rows: Charge[]; total: number }> {
  const base = db()('charges as c');
  if (personId) base.where('c.person_id', personId);
  const [{ count }] = (await base.clone().count({ count: '*' })) as [{ count: number }];
  const column = { date: 'c.created_at', amount: 'c.amount_minor', state: 'c.state', machine: 'm.name' }[opts.sort];
  const q = chargeQuery();
  if (personId) q.where('c.person_id', personId);
  const rows = await q.orderBy(column, opts.dir).orderBy('c.id').limit(opts.pageSize).offset((opts.page - 1) * opts.pageSize);
  return { total: Number(count), rows: rows.map(toCharge) };
}

export async function refundsOf(chargeId: string): Promise<{ amountMinor: number; reason: string; at: Date; actorName: string | null; state: 'pending' | 'done' | 'failed' }[]> {
  const rows = await db()('charge_refunds as r').leftJoin('people as p', 'p.id', 'r.actor_id').where('r.charge_id', chargeId)
    .orderBy('r.created_at').select('r.amount_minor', 'r.reason', 'r.created_at', 'r.state', 'p.name');
  return rows.map((r) => ({ amountMinor: r.amount_minor, reason: r.reason, at: r.created_at, actorName: r.name, state: r.state }));
}

/**
 * Internal recharge for finance: one line per recharged charge in the month (site time zone), net of
 * refunds, and a last TOTAL line equal to the sum of the lines.
 */
export async function rechargeCsv(month: string, costCentre?: string): Promise<{ csv: string; totalMinor: number; lines: number }> {
  const { timeZone, currency } = await getSettings();
  const [y, m] = month.split('-').map(Number) as [number, number];
  const from = zonedMidnight(`${month}-01`, timeZone);
  const next = m === 12 ? `${y + 1}-01-01` : `${y}-${String(m + 1).padStart(2, '0')}-01`;
  const to = zonedMidnight(next, timeZone);
  const q = chargeQuery().where('c.method', 'recharge').whereIn('c.state', ['recharged', 'refunded'])
    .where('c.created_at', '>=', from).where('c.created_at', '<', to).orderBy('c.cost_centre').orderBy('c.created_at');
  if (costCentre) q.where('c.cost_centre', costCentre);
  const rows = (await q).map(toCharge);
  const money = (n: number) => majorUnits(n, currency);
  let total = 0;
  const records = rows.map((c) => {
    const net = c.amountMinor - c.refundedMinor;
    total += net;
    return [zonedDate(c.createdAt, timeZone), c.costCentre, c.personName, c.personEmail, c.machineName ?? '', c.kind.replace('_', ' '), c.minutes ?? '', money(net), money(c.taxMinor), c.id];
  });
  const csv = toCsv(
    ['date', 'cost_centre', 'person', 'email', 'machine', 'kind', 'minutes', `amount (${currency})`, `tax_included (${currency})`, 'charge_id'],
    [...records, ['TOTAL', costCentre ?? 'all', '', '', '', '', '', money(total), '', '']],
  );
  return { csv, totalMinor: total, lines: records.length };
}

// ---------------------------------------------------------------------------------------------
// Webhooks

/** Handles a signed provider event: refunds and failures made elsewhere reach our record. Idempotent by event id. */
export async function handleWebhook(body: string, signature: string | null): Promise<{ received: true; duplicate: boolean; handled: boolean }> {
  const event = verifyWebhook(body, signature);
  return transaction(async (trx) => {
    const inserted = await trx('payment_events').insert({ id: event.id, type: event.type }).onConflict('id').ignore().returning('id');
    if (!inserted.length) return { received: true as const, duplicate: true, handled: false };
    const obj = event.data.object as { id?: string; amount_refunded?: number; amount_captured?: number; failure_message?: string; failure_code?: string };
    if (!obj.id) return { received: true as const, duplicate: false, handled: false };
    const row = await trx('charges').where({ provider_charge_id: obj.id }).forUpdate().first();
    if (!row) return { received: true as const, duplicate: false, handled: false };
    if (event.type === 'charge.refunded' && typeof obj.amount_refunded === 'number' && obj.amount_refunded > row.refunded_minor) {
      const full = obj.amount_refunded >= row.captured_minor;
      await update(trx, row.id, { refunded_minor: Math.min(obj.amount_refunded, row.captured_minor), state: full ? 'refunded' : row.state });
      await recordAudit(trx, { actorId: null, kind: 'charge.refunded', subjectType: 'charge', subjectId: row.id, summary: `The provider reported a refund: ${formatMoney(obj.amount_refunded, row.currency)} in total` });
      return { received: true as const, duplicate: false, handled: true };
    }
    if (event.type === 'charge.failed' && row.state !== 'payment failed' && row.state !== 'captured') {
      await update(trx, row.id, { state: 'payment failed', failure_code: obj.failure_code ?? 'failed', failure_message: obj.failure_message ?? 'The provider reported the charge failed.' });
      const p = await personFor(row.person_id, trx);
      await queueMail(trx, p.email, 'Payment failed', {
        greeting: `Kia ora ${p.name},`,
        paragraphs: [`A payment of ${formatMoney(row.amount_minor, row.currency)} failed. New bookings are paused until it is settled: save a working card on your Account screen.`],
        action: { label: 'Open your Account', url: `${env().PUBLIC_BASE_URL}/account` },
      });
      return { received: true as const, duplicate: false, handled: true };
    }
    if (event.type === 'charge.captured' && row.state === 'held' && typeof obj.amount_captured === 'number') {
      await update(trx, row.id, { state: 'captured', captured_minor: obj.amount_captured, held_minor: 0 });
      return { received: true as const, duplicate: false, handled: true };
    }
    return { received: true as const, duplicate: false, handled: false };
  });
}

/**
 * For reconciliation: the provider's charges and refunds created in [from, to), through the SDK's list calls
 * (auto-paged). The local fake ignores the `created` filter, so the period is also applied here.
 */
export async function providerActivity(from: Date, to: Date): Promise<{ charges: ProviderChargeListed[]; refunds: ProviderRefundListed[] }> {
  const created = { gte: Math.floor(from.getTime() / 1000), lt: Math.floor(to.getTime() / 1000) };
  const inPeriod = (t: number) => t >= created.gte && t < created.lt;
  const charges: ProviderChargeListed[] = [];
  for await (const c of provider().charges.list({ limit: 100, created })) if (inPeriod(c.created)) charges.push(c as never);
  const refunds: ProviderRefundListed[] = [];
  for await (const r of provider().refunds.list({ limit: 100, created })) if (inPeriod(r.created)) refunds.push(r as never);
  return { charges, refunds };
}
export type ProviderChargeListed = { id: string; amount: number; amount_captured?: number; amount_refunded: number; captured: boolean; status: string; created: number; metadata?: Record<string, string> | null };
export type ProviderRefundListed = { id: string; charge: string | null; amount: number; created: number; metadata?: Record<string, string> | null };

/** For reconciliation: our card charges with a provider id made in [from, to) or named in `providerIds`; our refunds made at the provider likewise. */
export async function recordedActivity(from: Date, to: Date, providerChargeIds: string[], providerRefundIds: string[]) {
  const charges = await db()('charges').whereNotNull('provider_charge_id').where((q) => {
    q.where((w) => w.where('created_at', '>=', from).where('created_at', '<', to));
    if (providerChargeIds.length) q.orWhereIn('provider_charge_id', providerChargeIds);
  }).select('id', 'provider_charge_id', 'state', 'held_minor', 'captured_minor', 'refunded_minor', 'created_at');
  const refunds = await db()('charge_refunds').whereNotNull('provider_refund_id').where((q) => {
    q.where((w) => w.where('created_at', '>=', from).where('created_at', '<', to));
    if (providerRefundIds.length) q.orWhereIn('provider_refund_id', providerRefundIds);
  }).select('id', 'charge_id', 'provider_refund_id', 'amount_minor', 'created_at');
  return {
    charges: charges.map((c) => ({ id: c.id, providerChargeId: c.provider_charge_id, state: c.state, heldMinor: c.held_minor, capturedMinor: c.captured_minor, refundedMinor: c.refunded_minor, createdAt: c.created_at })),
    refunds: refunds.map((r) => ({ id: r.id, chargeId: r.charge_id, providerRefundId: r.provider_refund_id, amountMinor: r.amount_minor, createdAt: r.created_at })),
  };
}

/** Which of these ids are charges of ours. */
export async function knownChargeIds(ids: string[]): Promise<Set<string>> {
  const uuids = ids.filter((i) => /^[0-9a-f-]{36}$/i.test(i));
  if (!uuids.length) return new Set();
  return new Set(await db()('charges').whereIn('id', uuids).pluck('id'));
}

/** For tests and support: the provider's charges of a person (to check nothing was taken twice). */
export async function providerChargesOf(personId: string): Promise<{ id: string; amount: number; captured: boolean; refunded: number }[]> {
  const out: { id: string; amount: number; captured: boolean; refunded: number }[] = [];
  // every charge we make carries metadata.personId (the local fake does not filter charges by customer)
  for await (const c of provider().charges.list({ limit: 100 })) {
    if (c.metadata?.personId === personId && c.status !== 'failed') out.push({ id: c.id, amount: c.amount, captured: c.captured, refunded: c.amount_refunded });
  }
  return out;
}
