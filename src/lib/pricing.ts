/**
 * The pricing engine: pure, no I/O, integer minor units of the currency only (never floats).
 *
 * Rules (documented in DEVELOPERS.md › Billing, tested in tests/unit/pricing.test.ts):
 * - Beam time: the minutes are rounded UP to the version's increment (per started block), then priced at
 *   the per-minute rate of the machine × tier.
 * - Minimum charge: a session with any beam time, or any checked-in session (even one of under a minute, billed
 *   0 minutes), costs at least the minimum (a "minimum charge" line tops it up).
 * - Daily cap per person: beam time of one day never costs more than the cap, given what the person has
 *   already been charged for beam time that day (a negative "daily cap" line). The cap wins over the minimum.
 *   Materials and fees are outside the cap.
 * - Materials: sheets sold by the space, quantity × sheet price.
 * - Fees: late cancellation and no-show, flat amounts.
 * - Tax: ONE rounding, on the total (not per line), half-up. Inclusive: the lines already contain tax and
 *   tax = total × r / (1 + r); exclusive: tax = subtotal × r, added to the total.
 * - The provider's minimum charge amount: a total below it is not sent to the card; by rule it is either
 *   carried to the balance owed (charged with the next charge that takes it over the minimum) or waived.
 */

import type { Tier } from './vocabulary';

/**
 * The payment provider's smallest card charge per currency, in minor units. USD 0.50, GBP 0.30 and JPY 50 are from
 * the provider's supported-currencies table (REFERENCE.md); NZD, AUD, EUR 0.50 from memory of the same table.
 * Currencies not listed have no provider minimum here (0).
 */
export const PROVIDER_MINIMUM_MINOR: Readonly<Record<string, number>> = { USD: 50, GBP: 30, JPY: 50, NZD: 50, AUD: 50, EUR: 50, CAD: 50 };

export type TaxMode = 'inclusive' | 'exclusive';
export type MinimumRule = 'carry' | 'waive';

export interface Material {
  sku: string;
  name: string;
  /** price of one sheet, minor units, tax treated like every other line */
  priceMinor: number;
}

/** One price version, as the engine needs it (the database adds id, effective date and author). */
export interface PriceTable {
  currency: string;
  /** per-minute rate in minor units by machine id, then tier; a missing rate means "not priced" */
  rates: Record<string, Partial<Record<Tier, number>>>;
  incrementMinutes: number;
  minimumChargeMinor: number;
  /** null: no cap */
  dailyCapMinor: number | null;
  lateCancelFeeMinor: number;
  noShowFeeMinor: number;
  taxMode: TaxMode;
  /** basis points: 1500 = 15 % */
  taxRateBp: number;
  materials: Material[];
  minimumRule: MinimumRule;
}

export type LineKind = 'beam_time' | 'minimum' | 'daily_cap' | 'material' | 'late_cancellation' | 'no_show';

export interface Line {
  kind: LineKind;
  label: string;
  quantity: number;
  unitMinor: number;
  amountMinor: number;
}

export interface QuoteInput {
  machineId: string;
  tier: Tier;
  /** measured (or planned) beam time in minutes, ≥ 0 */
  minutes: number;
  materials?: { sku: string; quantity: number }[];
  /** beam time already charged to this person on the same day (site time zone), minor units */
  alreadyChargedTodayMinor?: number;
  lateCancellation?: boolean;
  noShow?: boolean;
  machineName?: string;
  /** a checked-in session: the minimum charge applies even when it measured under a minute (0 billable minutes) */
  checkedIn?: boolean;
}

export interface Quote {
  currency: string;
  lines: Line[];
  /** the sum of the lines */
  subtotalMinor: number;
  taxMinor: number;
  taxMode: TaxMode;
  taxRateBp: number;
  /** what is owed: subtotal (inclusive) or subtotal + tax (exclusive) */
  amountMinor: number;
  billedMinutes: number;
}

export class PricingError extends Error {
  constructor(
    public readonly code: 'not_priced' | 'unknown_material' | 'bad_input',
    message: string,
  ) {
    super(message);
  }
}

const isCount = (n: number) => Number.isSafeInteger(n) && n >= 0;

/** a / b rounded half-up, for non-negative integers (exact integer arithmetic). */
export function divRoundHalfUp(a: number, b: number): number {
  if (!isCount(a) || !Number.isSafeInteger(b) || b <= 0) throw new RangeError('divRoundHalfUp needs a ≥ 0 and b > 0 integers');
  const big = (BigInt(a) * 2n + BigInt(b)) / (BigInt(b) * 2n);
  return Number(big);
}

/** Rounds minutes up to the increment (per started block). */
export function billableMinutes(minutes: number, increment: number): number {
  if (!(minutes >= 0) || !Number.isFinite(minutes)) throw new PricingError('bad_input', 'Minutes must be zero or more.');
  if (!Number.isSafeInteger(increment) || increment < 1) throw new PricingError('bad_input', 'The increment must be a whole number of minutes, at least 1.');
  return Math.ceil(minutes / increment) * increment;
}

/**
 * Tax contained in / added to an amount, rounded half-up once. The rate is in basis points with at most one
 * decimal (a thousandth of a percent, as in 8.875 % = 887.5 bp), worked in integers ten times finer.
 */
export function taxOf(amountMinor: number, rateBp: number, mode: TaxMode): number {
  const r = Math.round(rateBp * 10);
  if (!(r >= 0) || Math.abs(r - rateBp * 10) > 1e-6) throw new PricingError('bad_input', 'A tax rate has at most three decimals of a percent.');
  if (mode === 'inclusive') return divRoundHalfUp(amountMinor * r, 100_000 + r);
  return divRoundHalfUp(amountMinor * r, 100_000);
}

/** A tax rate in percent (as the Site screen holds it) in basis points. */
export function percentToBp(percent: number): number {
  return Math.round(percent * 1000) / 10;
}

export function quote(table: PriceTable, input: QuoteInput): Quote {
  const rate = table.rates[input.machineId]?.[input.tier];
  if (rate === undefined) throw new PricingError('not_priced', `This machine has no ${input.tier} rate in the price version in force.`);
  const name = input.machineName ?? 'Beam time';
  const lines: Line[] = [];
  const minutes = billableMinutes(input.minutes, table.incrementMinutes);
  const raw = minutes * rate;
  lines.push({ kind: 'beam_time', label: `${name}: ${minutes} min (per started ${table.incrementMinutes} min)`, quantity: minutes, unitMinor: rate, amountMinor: raw });
  let beam = raw;
  if ((minutes > 0 || input.checkedIn) && raw < table.minimumChargeMinor) {
    lines.push({ kind: 'minimum', label: 'Minimum charge', quantity: 1, unitMinor: table.minimumChargeMinor - raw, amountMinor: table.minimumChargeMinor - raw });
    beam = table.minimumChargeMinor;
  }
  if (table.dailyCapMinor !== null) {
    const already = Math.max(0, input.alreadyChargedTodayMinor ?? 0);
    const room = Math.max(0, table.dailyCapMinor - already);
    if (beam > room) {
      lines.push({ kind: 'daily_cap', label: 'Daily cap reached', quantity: 1, unitMinor: room - beam, amountMinor: room - beam });
      beam = room;
    }
  }
  for (const m of input.materials ?? []) {
    if (!isCount(m.quantity)) throw new PricingError('bad_input', 'A material quantity is a whole number of sheets.');
    if (m.quantity === 0) continue;
    const mat = table.materials.find((x) => x.sku === m.sku);
    if (!mat) throw new PricingError('unknown_material', `The space does not sell ${m.sku}.`);
    lines.push({ kind: 'material', label: `${mat.name} × ${m.quantity}`, quantity: m.quantity, unitMinor: mat.priceMinor, amountMinor: m.quantity * mat.priceMinor });
  }
  if (input.lateCancellation) lines.push({ kind: 'late_cancellation', label: 'Late cancellation fee', quantity: 1, unitMinor: table.lateCancelFeeMinor, amountMinor: table.lateCancelFeeMinor });
  if (input.noShow) lines.push({ kind: 'no_show', label: 'No-show fee', quantity: 1, unitMinor: table.noShowFeeMinor, amountMinor: table.noShowFeeMinor });

  const subtotal = lines.reduce((s, l) => s + l.amountMinor, 0);
  const tax = taxOf(subtotal, table.taxRateBp, table.taxMode);
  return {
    currency: table.currency,
    lines,
    subtotalMinor: subtotal,
    taxMinor: tax,
    taxMode: table.taxMode,
    taxRateBp: table.taxRateBp,
    amountMinor: table.taxMode === 'inclusive' ? subtotal : subtotal + tax,
    billedMinutes: minutes,
  };
}

/** The beam-time part of a quote (what counts toward the daily cap). */
export function beamTimeMinor(q: Quote): number {
  return q.lines.filter((l) => l.kind === 'beam_time' || l.kind === 'minimum' || l.kind === 'daily_cap').reduce((s, l) => s + l.amountMinor, 0);
}

/** What a charge records of its quote (stored as `charges.breakdown`, shown on receipts). */
export interface Breakdown extends Omit<Quote, 'currency'> {
  beamTimeMinor: number;
  /** small sums carried in from earlier charges and paid with this one */
  carriedInMinor?: number;
  estimate?: boolean;
}

export function breakdownOf(q: Quote, extra: Partial<Breakdown> = {}): Breakdown {
  return {
    lines: q.lines,
    subtotalMinor: q.subtotalMinor,
    taxMinor: q.taxMinor,
    taxMode: q.taxMode,
    taxRateBp: q.taxRateBp,
    amountMinor: q.amountMinor,
    beamTimeMinor: beamTimeMinor(q),
    billedMinutes: q.billedMinutes,
    ...extra,
  };
}

export interface Settlement {
  /** send this to the card now */
  chargeNowMinor: number;
  /** kept on the balance owed, charged with a later charge */
  carriedMinor: number;
  /** forgiven */
  waivedMinor: number;
}

/**
 * What to do with `amountMinor` (plus `carriedInMinor` already owed from earlier small sums) given the
 * provider's minimum for the currency: at or over it, charge everything; under it, carry or waive by rule.
 */
export function settle(amountMinor: number, currency: string, rule: MinimumRule, carriedInMinor = 0, providerMinimum = PROVIDER_MINIMUM_MINOR[currency.toUpperCase()] ?? 0): Settlement {
  const total = amountMinor + carriedInMinor;
  if (total === 0) return { chargeNowMinor: 0, carriedMinor: 0, waivedMinor: 0 };
  if (total >= providerMinimum) return { chargeNowMinor: total, carriedMinor: 0, waivedMinor: 0 };
  return rule === 'carry' ? { chargeNowMinor: 0, carriedMinor: total, waivedMinor: 0 } : { chargeNowMinor: 0, carriedMinor: carriedInMinor, waivedMinor: amountMinor };
}

/** The terms a price version sets, shared by a stored version and a new one: the table without its rates, plus who pays by recharge and a note. */
export interface VersionTerms extends Omit<PriceTable, 'rates'> {
  rechargeTiers: Tier[];
  note: string;
}

export interface PriceVersion extends VersionTerms {
  id: string;
  effectiveFrom: Date;
  createdBy: string | null;
  createdByName: string | null;
  createdAt: Date;
  /** machine id → tier → per-minute rate in minor units */
  rates: Record<string, Partial<Record<Tier, number>>>;
}
