/**
 * Price versions and quotes: all SQL of the pricing area. A version is never edited: a change is a new
 * version with its own effective date, and a session is priced by the version in force when it started.
 * Tax is the site's (Admin › Site: one rate, included in or added to prices), applied when the charge is made;
 * each charge's breakdown records the rate it used. A version records the site's currency and tax of the day it
 * was made, for the history only.
 */
import { db, pgCode, PG, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { startOfZonedDay, zonedDayBounds } from '@lib/time';
import { getSettings, type SiteSettings } from './settings';
import { PricingError, percentToBp, quote, type Material, type MinimumRule, type PriceTable, type PriceVersion, type Quote, type QuoteInput, type TaxMode, type VersionTerms } from '@lib/pricing';

export type { PriceVersion } from '@lib/pricing';
import { TIERS, type Tier } from '@lib/vocabulary';

type Row = {
  id: string; effective_from: Date; currency: string; increment_minutes: number; minimum_charge_minor: number;
  daily_cap_minor: number | null; late_cancel_fee_minor: number; no_show_fee_minor: number; tax_mode: TaxMode;
  tax_rate_bp: number; minimum_rule: MinimumRule; recharge_tiers: Tier[]; materials: Material[]; note: string;
  created_by: string | null; created_by_name?: string | null; created_at: Date;
};

async function withRates(trx: Conn, rows: Row[]): Promise<PriceVersion[]> {
  if (!rows.length) return [];
  const rates = await trx('price_rates').whereIn('version_id', rows.map((r) => r.id)).select('version_id', 'machine_id', 'tier', 'per_minute_minor');
  return rows.map((r) => {
    const byMachine: Record<string, Partial<Record<Tier, number>>> = {};
    for (const x of rates.filter((x) => x.version_id === r.id)) (byMachine[x.machine_id] ??= {})[x.tier as Tier] = x.per_minute_minor;
    return {
      id: r.id,
      effectiveFrom: r.effective_from,
      currency: r.currency,
      incrementMinutes: r.increment_minutes,
      minimumChargeMinor: r.minimum_charge_minor,
      dailyCapMinor: r.daily_cap_minor,
      lateCancelFeeMinor: r.late_cancel_fee_minor,
      noShowFeeMinor: r.no_show_fee_minor,
      taxMode: r.tax_mode,
      taxRateBp: r.tax_rate_bp,
      minimumRule: r.minimum_rule,
      rechargeTiers: r.recharge_tiers,
      materials: r.materials,
      note: r.note,
      createdBy: r.created_by,
      createdByName: r.created_by_name ?? null,
      createdAt: r.created_at,
      rates: byMachine,
    };
  });
}

/** The site's tax as the pricing engine takes it (Admin › Site), and the site's currency. */
export interface SiteTax {
  taxMode: TaxMode;
  taxRateBp: number;
  currency: string;
}

export async function siteTax(trx: Conn = db(), known?: SiteSettings): Promise<SiteTax> {
  const s = known ?? (await getSettings(trx));
  return { taxMode: s.pricesIncludeTax ? 'inclusive' : 'exclusive', taxRateBp: percentToBp(s.taxRatePercent), currency: s.currency };
}

/** The site's tax for pricing `v`; refused (409) when the version's amounts are in another currency than the site's. */
async function taxFor(v: PriceVersion, trx: Conn, known?: SiteSettings): Promise<SiteTax> {
  const tax = await siteTax(trx, known);
  if (v.currency !== tax.currency) {
    throw new DomainError('conflict', 'no_prices', `The price version in force is in ${v.currency} but the site's currency is ${tax.currency}; an admin makes a new price version on the Pricing screen.`);
  }
  return tax;
}

/** The price table of a version with the site's tax of now. */
export function toTable(v: PriceVersion, tax: SiteTax): PriceTable {
  return {
    currency: v.currency,
    rates: v.rates,
    incrementMinutes: v.incrementMinutes,
    minimumChargeMinor: v.minimumChargeMinor,
    dailyCapMinor: v.dailyCapMinor,
    lateCancelFeeMinor: v.lateCancelFeeMinor,
    noShowFeeMinor: v.noShowFeeMinor,
    taxMode: tax.taxMode,
    taxRateBp: tax.taxRateBp,
    materials: v.materials,
    minimumRule: v.minimumRule,
  };
}

/** Every version, newest effective date first, with who made it. */
export async function listVersions(): Promise<PriceVersion[]> {
  const rows = (await db()('price_versions as v')
    .leftJoin('people as p', 'p.id', 'v.created_by')
    .select('v.*', 'p.name as created_by_name')
    .orderBy('v.effective_from', 'desc')) as Row[];
  return withRates(db(), rows);
}

/** The version in force at `at` (the latest with effective_from ≤ at), or null when none is. */
export async function versionAt(at: Date, trx: Conn = db()): Promise<PriceVersion | null> {
  const row = (await trx('price_versions').where('effective_from', '<=', at).orderBy('effective_from', 'desc').first()) as Row | undefined;
  if (!row) return null;
  return (await withRates(trx, [row]))[0] ?? null;
}

/** Every sheet code sold by the version in force at `at` or by a later one (a material may name a sheet sold from next month). */
export async function sheetCodesFrom(at: Date, trx: Conn = db()): Promise<Set<string>> {
  const current = await versionAt(at, trx);
  const later = (await trx('price_versions').where('effective_from', '>', at).select('materials')) as { materials: { sku: string }[] }[];
  return new Set([...(current?.materials ?? []), ...later.flatMap((v) => v.materials ?? [])].map((m) => m.sku));
}

async function requireVersionAt(at: Date, trx: Conn = db()): Promise<PriceVersion> {
  const v = await versionAt(at, trx);
  if (!v) throw new DomainError('conflict', 'no_prices', 'No price version is in force at that time; an admin sets prices on the Pricing screen.');
  return v;
}

/** The per-minute rate of a machine for a tier in the version in force when the session started. */
export async function priceFor(machineId: string, tier: Tier, startedAt: Date, trx: Conn = db()): Promise<{ versionId: string; effectiveFrom: Date; currency: string; perMinuteMinor: number; table: PriceTable }> {
  const v = await requireVersionAt(startedAt, trx);
  const rate = v.rates[machineId]?.[tier];
  if (rate === undefined) throw new DomainError('conflict', 'not_priced', `This machine has no ${tier} rate in the price version in force.`);
  return { versionId: v.id, effectiveFrom: v.effectiveFrom, currency: v.currency, perMinuteMinor: rate, table: toTable(v, await taxFor(v, trx)) };
}

/** Beam time already charged to a person on the site-local day of `at` (counts toward the daily cap). */
export async function beamTimeChargedOnDay(personId: string, at: Date, trx: Conn = db(), known?: SiteSettings): Promise<number> {
  const { timeZone } = known ?? (await getSettings());
  const { from, to } = zonedDayBounds(at, timeZone);
  const row = await trx('charges')
    .where({ person_id: personId, kind: 'beam_time' })
    .whereNotIn('state', ['released', 'refunded', 'waived'])
    .where('started_at', '>=', from)
    .where('started_at', '<', to)
    .first(trx.raw("coalesce(sum((breakdown->>'beamTimeMinor')::int), 0)::int as total"));
  return Number(row?.total ?? 0);
}

export interface QuoteRequest {
  machineId: string;
  tier: Tier;
  minutes: number;
  at?: Date;
  materials?: { sku: string; quantity: number }[];
  personId?: string;
  lateCancellation?: boolean;
  noShow?: boolean;
  /** a checked-in session (the minimum applies even to 0 billable minutes) */
  checkedIn?: boolean;
}

export interface PricedQuote extends Quote {
  priceVersionId: string;
  effectiveFrom: Date;
  minimumRule: MinimumRule;
  rechargeTiers: Tier[];
}

/** Prices a session with the version in force at `at` (default now). */
export async function quoteFor(req: QuoteRequest, trx: Conn = db()): Promise<PricedQuote> {
  const at = req.at ?? new Date();
  const v = await requireVersionAt(at, trx);
  const machine = await trx('machines').where({ id: req.machineId }).first('name');
  if (!machine) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
  const settings = await getSettings(trx); // read once: the day of the daily cap and the tax
  const input: QuoteInput = {
    machineId: req.machineId,
    machineName: machine.name,
    tier: req.tier,
    minutes: req.minutes,
    materials: req.materials,
    lateCancellation: req.lateCancellation,
    noShow: req.noShow,
    checkedIn: req.checkedIn,
    alreadyChargedTodayMinor: req.personId ? await beamTimeChargedOnDay(req.personId, at, trx, settings) : 0,
  };
  try {
    const q = quote(toTable(v, await taxFor(v, trx, settings)), input);
    return { ...q, priceVersionId: v.id, effectiveFrom: v.effectiveFrom, minimumRule: v.minimumRule, rechargeTiers: v.rechargeTiers };
  } catch (err) {
    if (err instanceof PricingError) throw new DomainError('invalid', err.code, err.message);
    throw err;
  }
}

/** A new version: its currency and tax are the site's (set on Admin › Site), not part of the input. */
export interface NewVersion extends Omit<VersionTerms, 'currency' | 'taxMode' | 'taxRateBp'> {
  effectiveFrom: Date;
  rates: { machineId: string; tier: Tier; perMinuteMinor: number }[];
}

/** Adds a price version (audited). The effective date may not be in the past: history is never rewritten. */
export async function createVersion(actorId: string, input: NewVersion): Promise<PriceVersion> {
  if (input.effectiveFrom.getTime() < Date.now() - 60_000) {
    throw new DomainError('invalid', 'invalid', 'A new price version takes effect now or later, never in the past.', { effectiveFrom: 'Choose today or a later date.' });
  }
  const skus = new Set<string>();
  for (const m of input.materials) {
    if (skus.has(m.sku)) throw new DomainError('invalid', 'invalid', 'Each material code appears once.', { materials: `${m.sku} appears twice.` });
    skus.add(m.sku);
  }
  try {
    return await transaction(async (trx) => {
      const tax = await siteTax(trx);
      const currency = tax.currency;
      const machineIds = new Set((await trx('machines').pluck('id')) as string[]);
      for (const r of input.rates) {
        if (!machineIds.has(r.machineId)) throw new DomainError('invalid', 'invalid', 'A rate names a machine that does not exist.', { rates: r.machineId });
      }
      const [row] = await trx('price_versions')
        .insert({
          effective_from: input.effectiveFrom,
          currency,
          increment_minutes: input.incrementMinutes,
          minimum_charge_minor: input.minimumChargeMinor,
          daily_cap_minor: input.dailyCapMinor,
          late_cancel_fee_minor: input.lateCancelFeeMinor,
          no_show_fee_minor: input.noShowFeeMinor,
          // the site's tax on the day (a record: quotes read the site's tax when they are made)
          tax_mode: tax.taxMode,
          tax_rate_bp: Math.round(tax.taxRateBp),
          minimum_rule: input.minimumRule,
          recharge_tiers: input.rechargeTiers,
          materials: JSON.stringify(input.materials),
          note: input.note,
          created_by: actorId,
        })
        .returning('*');
      const unique = new Map(input.rates.map((r) => [`${r.machineId}:${r.tier}`, r]));
      if (unique.size) {
        await trx('price_rates').insert([...unique.values()].map((r) => ({ version_id: row.id, machine_id: r.machineId, tier: r.tier, per_minute_minor: r.perMinuteMinor })));
      }
      const actor = await trx('people').where({ id: actorId }).first('name');
      const [version] = await withRates(trx, [{ ...(row as Row), created_by_name: actor?.name ?? null }]);
      const before = await versionAt(new Date(input.effectiveFrom.getTime() - 1), trx);
      await recordAudit(trx, {
        actorId,
        kind: 'price.version_created',
        subjectType: 'price_version',
        subjectId: row.id,
        summary: `New price version from ${input.effectiveFrom.toISOString()} (${currency}, ${unique.size} rates)${input.note ? `: ${input.note}` : ''}`,
        before: before ? toTable(before, tax) : null,
        after: toTable(version!, tax),
      });
      return version!;
    });
  } catch (err) {
    if (pgCode(err) === PG.uniqueViolation) throw new DomainError('conflict', 'version_exists', 'A price version already starts at that moment; choose another date.');
    throw err;
  }
}

export { TIERS };
