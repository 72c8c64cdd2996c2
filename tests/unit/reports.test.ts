/** The pure parts of Reports: the period of a query and the site weeks it spans (DST-safe). */
import { describe, expect, it } from 'vitest';
import { MAX_PERIOD_DAYS, PeriodError, periodWeeks, reportQuery, resolvePeriod, share } from '../../src/lib/reports';

const TZ = 'Pacific/Auckland';

describe('resolvePeriod', () => {
  it('defaults to the four weeks up to today', () => {
    expect(resolvePeriod({}, '2026-12-02', TZ)).toMatchObject({ from: '2026-11-05', to: '2026-12-02', days: 28 });
  });
  it('turns whole days in the site zone into instants [start, end)', () => {
    const p = resolvePeriod({ from: '2026-03-02', to: '2026-03-08' }, '2026-12-02', TZ);
    expect(p.start.toISOString()).toBe('2026-03-01T11:00:00.000Z'); // NZDT, +13
    expect(p.end.toISOString()).toBe('2026-03-08T11:00:00.000Z');
    expect(p.days).toBe(7);
  });
  it('refuses a reversed or too long range', () => {
    expect(() => resolvePeriod({ from: '2026-03-08', to: '2026-03-01' }, '2026-12-02', TZ)).toThrow(PeriodError);
    expect(() => resolvePeriod({ from: '2025-01-01', to: '2026-12-01' }, '2026-12-02', TZ)).toThrow(/at most/);
    expect(resolvePeriod({ from: '2026-01-01', to: '2027-02-04' }, '2026-12-02', TZ).days).toBe(MAX_PERIOD_DAYS);
  });
});

describe('periodWeeks', () => {
  it('splits at site Mondays and clips to the period, across the April daylight-saving change', () => {
    const p = resolvePeriod({ from: '2026-04-01', to: '2026-04-14' }, '2026-12-02', TZ);
    const weeks = periodWeeks(p, TZ);
    expect(weeks.map((w) => w.start.toISOString())).toEqual([
      '2026-03-31T11:00:00.000Z', // Wed 1 April 00:00 NZDT
      '2026-04-05T12:00:00.000Z', // Mon 6 April 00:00 NZST (clocks went back on Sunday 5 April)
      '2026-04-12T12:00:00.000Z',
    ]);
    // the week with the change has 121 hours from Wednesday to Monday (one extra hour)
    expect((weeks[0]!.end.getTime() - weeks[0]!.start.getTime()) / 3_600_000).toBe(5 * 24 + 1);
    expect(weeks.at(-1)!.end.toISOString()).toBe(p.end.toISOString());
  });
});

describe('reportQuery and share', () => {
  it('accepts several machine ids separated by commas, and rejects anything else', () => {
    const a = '0b6f1c2e-0000-4000-8000-000000000001';
    const b = '0b6f1c2e-0000-4000-8000-000000000002';
    expect(reportQuery.parse({ machineId: `${a}, ${b},${a}` }).machineId).toEqual([a, b]);
    expect(reportQuery.safeParse({ machineId: 'laser-a' }).success).toBe(false);
    expect(reportQuery.safeParse({ from: '2026-02-30' }).success).toBe(false);
    expect(reportQuery.safeParse({ extra: '1' }).success).toBe(false);
  });
  it('rounds a share to four decimals and has none of nothing', () => {
    expect(share(270, 2160)).toBe(0.125);
    expect(share(1, 3)).toBe(0.3333);
    expect(share(5, 0)).toBeNull();
  });
});
