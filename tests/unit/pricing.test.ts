/** The pricing engine: worked examples and properties (fast-check). */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { PROVIDER_MINIMUM_MINOR, beamTimeMinor, billableMinutes, divRoundHalfUp, percentToBp, quote, settle, taxOf, type PriceTable } from '../../src/lib/pricing';
import { currencyExponent, formatMinor, parseMajor } from '../../src/lib/format';
import { TIERS } from '../../src/lib/vocabulary';

const table = (over: Partial<PriceTable> = {}): PriceTable => ({
  currency: 'NZD',
  rates: { a: { student: 40, staff: 60, community: 80, commercial: 150 } },
  incrementMinutes: 5,
  minimumChargeMinor: 500,
  dailyCapMinor: 6000,
  lateCancelFeeMinor: 1000,
  noShowFeeMinor: 1500,
  taxMode: 'inclusive',
  taxRateBp: 1500,
  materials: [{ sku: 'ply-3', name: '3 mm plywood sheet', priceMinor: 650 }],
  minimumRule: 'carry',
  ...over,
});

describe('currency exponents (ISO 4217 list one)', () => {
  it('has 0, 2 and 3 minor digits where ISO 4217 says so', () => {
    // source: ISO 4217 (REFERENCE.md › Money)
    expect(currencyExponent('JPY')).toBe(0);
    expect(currencyExponent('NZD')).toBe(2);
    expect(currencyExponent('usd')).toBe(2);
    expect(currencyExponent('BHD')).toBe(3);
    expect(currencyExponent('KWD')).toBe(3);
    expect(() => currencyExponent('XYZ')).toThrow(/Unknown currency/);
  });
  it('has an exponent for every currency the Site screen accepts (any code Intl knows), e.g. INR 2, IQD 3, HUF 2', () => {
    // ISO 4217 list one, from memory: INR 2, IQD 3, HUF 2 (Intl shows HUF and IQD without decimals), CLP 0, ISK 0
    expect(currencyExponent('INR')).toBe(2);
    expect(currencyExponent('IQD')).toBe(3);
    expect(currencyExponent('HUF')).toBe(2);
    expect(currencyExponent('CLP')).toBe(0);
    expect(currencyExponent('ISK')).toBe(0);
    for (const code of Intl.supportedValuesOf('currency')) expect([0, 2, 3]).toContain(currencyExponent(code));
    expect(formatMinor(123456, 'INR')).toBe('1234.56');
  });
  it('formats and parses minor units with string arithmetic', () => {
    expect(formatMinor(1234, 'NZD')).toBe('12.34');
    expect(formatMinor(5, 'NZD')).toBe('0.05');
    expect(formatMinor(1234, 'JPY')).toBe('1234');
    expect(formatMinor(1234, 'BHD')).toBe('1.234');
    expect(formatMinor(-50, 'NZD')).toBe('−0.50');
    expect(parseMajor('12.3', 'NZD')).toBe(1230);
    expect(parseMajor('0.005', 'KWD')).toBe(5);
    expect(parseMajor('12.345', 'NZD')).toBeNull();
    expect(parseMajor('1.5', 'JPY')).toBeNull();
    expect(parseMajor('-1', 'NZD')).toBeNull();
  });
  it('parse ∘ format is the identity for 0, 2 and 3 digit currencies', () => {
    fc.assert(fc.property(fc.integer({ min: 0, max: 10 ** 9 }), fc.constantFrom('JPY', 'NZD', 'BHD', 'KWD'), (n, c) => parseMajor(formatMinor(n, c), c) === n));
  });
});

describe('worked examples (invented rates)', () => {
  it('rounds minutes up per started increment and prices them', () => {
    expect(billableMinutes(0, 5)).toBe(0);
    expect(billableMinutes(1, 5)).toBe(5);
    expect(billableMinutes(5, 5)).toBe(5);
    expect(billableMinutes(5.01, 5)).toBe(10);
    const q = quote(table(), { machineId: 'a', tier: 'community', minutes: 21 });
    expect(q.billedMinutes).toBe(25);
    expect(q.lines[0]).toMatchObject({ kind: 'beam_time', quantity: 25, unitMinor: 80, amountMinor: 2000 });
    expect(q.amountMinor).toBe(2000);
    // 15 % GST inclusive: 2000 × 15/115 = 260.87 → 261 (half-up on the total; NZ GST at 15 %: statutory rate, Goods and Services Tax Act 1985 s 8, from memory)
    expect(q.taxMinor).toBe(261);
  });
  it('tops up to the minimum charge, but only when there was beam time', () => {
    const q = quote(table(), { machineId: 'a', tier: 'student', minutes: 3 });
    expect(q.lines.map((l) => l.kind)).toEqual(['beam_time', 'minimum']);
    expect(q.amountMinor).toBe(500);
    expect(quote(table(), { machineId: 'a', tier: 'student', minutes: 0 }).amountMinor).toBe(0);
  });
  it('caps beam time per day given what was already charged, and the cap wins over the minimum', () => {
    const q = quote(table(), { machineId: 'a', tier: 'commercial', minutes: 60, alreadyChargedTodayMinor: 5000 });
    expect(q.lines.find((l) => l.kind === 'daily_cap')?.amountMinor).toBe(1000 - 9000);
    expect(beamTimeMinor(q)).toBe(1000);
    const none = quote(table(), { machineId: 'a', tier: 'student', minutes: 3, alreadyChargedTodayMinor: 6000 });
    expect(beamTimeMinor(none)).toBe(0);
  });
  it('adds materials and fees outside the cap, and exclusive tax on top', () => {
    const t = table({ taxMode: 'exclusive', dailyCapMinor: 0 });
    const q = quote(t, { machineId: 'a', tier: 'staff', minutes: 10, materials: [{ sku: 'ply-3', quantity: 2 }], lateCancellation: true, noShow: true });
    expect(q.subtotalMinor).toBe(1300 + 1000 + 1500);
    expect(q.taxMinor).toBe(570); // 3800 × 15 % exactly
    expect(q.amountMinor).toBe(3800 + 570);
    expect(() => quote(t, { machineId: 'a', tier: 'staff', minutes: 1, materials: [{ sku: 'pvc', quantity: 1 }] })).toThrow(/does not sell/);
    expect(() => quote(t, { machineId: 'b', tier: 'staff', minutes: 1 })).toThrow(/no staff rate/);
  });
  it('rounds tax half-up exactly', () => {
    expect(divRoundHalfUp(5, 2)).toBe(3);
    expect(divRoundHalfUp(7, 2)).toBe(4);
    expect(divRoundHalfUp(4, 3)).toBe(1);
    expect(taxOf(10, 1500, 'exclusive')).toBe(2); // 1.5 → 2 (half-up)
    expect(taxOf(230, 1500, 'inclusive')).toBe(30); // 230 × 15/115 = 30 exactly
  });
  it('takes a rate with three decimals of a percent, as the Site screen allows (8.875 %: a US city sales tax, from memory)', () => {
    expect(percentToBp(8.875)).toBe(887.5);
    expect(percentToBp(15)).toBe(1500);
    expect(percentToBp(12.5)).toBe(1250);
    expect(taxOf(10_000, 887.5, 'exclusive')).toBe(888); // 887.5 → 888 (half-up)
    expect(taxOf(1000, 887.5, 'exclusive')).toBe(89); // 88.75
    expect(taxOf(10_887, 887.5, 'inclusive')).toBe(887); // 10887 × 8.875/108.875 = 887.45…
    expect(() => taxOf(100, 887.55, 'exclusive')).toThrow(/three decimals/);
  });
  it('carries or waives sums below the provider minimum (NZD 0.50 from memory; USD 0.50, GBP 0.30, JPY 50 from REFERENCE.md)', () => {
    expect(PROVIDER_MINIMUM_MINOR.USD).toBe(50);
    expect(PROVIDER_MINIMUM_MINOR.GBP).toBe(30);
    expect(PROVIDER_MINIMUM_MINOR.JPY).toBe(50);
    expect(settle(40, 'NZD', 'carry')).toEqual({ chargeNowMinor: 0, carriedMinor: 40, waivedMinor: 0 });
    expect(settle(40, 'NZD', 'carry', 30)).toEqual({ chargeNowMinor: 70, carriedMinor: 0, waivedMinor: 0 });
    expect(settle(40, 'NZD', 'waive')).toEqual({ chargeNowMinor: 0, carriedMinor: 0, waivedMinor: 40 });
    expect(settle(50, 'NZD', 'waive')).toEqual({ chargeNowMinor: 50, carriedMinor: 0, waivedMinor: 0 });
    expect(settle(49, 'JPY', 'carry')).toEqual({ chargeNowMinor: 0, carriedMinor: 49, waivedMinor: 0 });
  });
});

const arbTable = fc.record({
  currency: fc.constantFrom('JPY', 'NZD', 'BHD', 'KWD'),
  rate: fc.integer({ min: 0, max: 5000 }),
  incrementMinutes: fc.integer({ min: 1, max: 30 }),
  minimumChargeMinor: fc.integer({ min: 0, max: 20_000 }),
  dailyCapMinor: fc.option(fc.integer({ min: 0, max: 500_000 }), { nil: null }),
  taxMode: fc.constantFrom('inclusive' as const, 'exclusive' as const),
  taxRateBp: fc.integer({ min: 0, max: 3000 }),
}).map((r): PriceTable => ({
  ...table(),
  currency: r.currency,
  rates: { a: Object.fromEntries(TIERS.map((t) => [t, r.rate])) },
  incrementMinutes: r.incrementMinutes,
  minimumChargeMinor: r.minimumChargeMinor,
  dailyCapMinor: r.dailyCapMinor,
  taxMode: r.taxMode,
  taxRateBp: r.taxRateBp,
}));
const minutes = fc.integer({ min: 0, max: 24 * 60 });
const already = fc.integer({ min: 0, max: 600_000 });

describe('properties', () => {
  it('never negative, integer everywhere, lines add up to the subtotal', () => {
    fc.assert(fc.property(arbTable, minutes, already, fc.integer({ min: 0, max: 20 }), (t, m, a, sheets) => {
      const q = quote(t, { machineId: 'a', tier: 'community', minutes: m, alreadyChargedTodayMinor: a, materials: [{ sku: 'ply-3', quantity: sheets }] });
      const sum = q.lines.reduce((s, l) => s + l.amountMinor, 0);
      return q.amountMinor >= 0 && q.taxMinor >= 0 && beamTimeMinor(q) >= 0 && sum === q.subtotalMinor && [q.amountMinor, q.taxMinor, ...q.lines.map((l) => l.amountMinor)].every(Number.isSafeInteger);
    }));
  });
  it('monotonic in minutes', () => {
    fc.assert(fc.property(arbTable, minutes, minutes, already, (t, m1, m2, a) => {
      const [lo, hi] = m1 <= m2 ? [m1, m2] : [m2, m1];
      const ql = quote(t, { machineId: 'a', tier: 'student', minutes: lo, alreadyChargedTodayMinor: a });
      const qh = quote(t, { machineId: 'a', tier: 'student', minutes: hi, alreadyChargedTodayMinor: a });
      return ql.amountMinor <= qh.amountMinor;
    }));
  });
  it('the daily cap and the minimum are respected', () => {
    fc.assert(fc.property(arbTable, fc.integer({ min: 1, max: 24 * 60 }), already, (t, m, a) => {
      const beam = beamTimeMinor(quote(t, { machineId: 'a', tier: 'staff', minutes: m, alreadyChargedTodayMinor: a }));
      const room = t.dailyCapMinor === null ? Infinity : Math.max(0, t.dailyCapMinor - a);
      if (t.dailyCapMinor !== null && a + beam > Math.max(t.dailyCapMinor, a)) return false;
      return beam === Math.min(Math.max(billableMinutes(m, t.incrementMinutes) * (t.rates.a!.staff ?? 0), t.minimumChargeMinor), room);
    }));
  });
  it('tax rounding is exact: within half a minor unit of the true value, ties up', () => {
    // rates in tenths of a basis point (a thousandth of a percent), 0–50 %
    fc.assert(fc.property(fc.integer({ min: 0, max: 10 ** 9 }), fc.integer({ min: 0, max: 50_000 }), fc.constantFrom('inclusive' as const, 'exclusive' as const), (amt, tenths, mode) => {
      const tax = taxOf(amt, tenths / 10, mode);
      const num = BigInt(amt) * BigInt(tenths);
      const den = BigInt(mode === 'inclusive' ? 100_000 + tenths : 100_000);
      // |tax − num/den| ≤ 1/2, and exactly 1/2 only when rounding up: 2·tax·den − 2·num ∈ (−den, den]
      const diff = 2n * BigInt(tax) * den - 2n * num;
      return diff > -den && diff <= den;
    }));
  });
  it('billable minutes are the smallest multiple of the increment at or above the minutes', () => {
    fc.assert(fc.property(minutes, fc.integer({ min: 1, max: 60 }), (m, inc) => {
      const b = billableMinutes(m, inc);
      return b % inc === 0 && b >= m && b - inc < m;
    }));
  });
  it('settling never loses or invents money', () => {
    fc.assert(fc.property(fc.integer({ min: 0, max: 10_000 }), fc.integer({ min: 0, max: 49 }), fc.constantFrom('carry' as const, 'waive' as const), fc.constantFrom('NZD', 'JPY', 'GBP', 'BHD'), (amt, carried, rule, cur) => {
      const s = settle(amt, cur, rule, carried);
      const min = PROVIDER_MINIMUM_MINOR[cur] ?? 0;
      return s.chargeNowMinor + s.carriedMinor + s.waivedMinor === amt + carried && (s.chargeNowMinor === 0 || s.chargeNowMinor >= min);
    }));
  });
});
