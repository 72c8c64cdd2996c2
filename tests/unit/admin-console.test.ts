/** Pure parts of the admin console: day ranges in the site's time zone, site settings validation, CSV cells. */
import { describe, expect, it } from 'vitest';
import { isoLocal, isCalendarDate, nextDate, offsetMinutes, startOfZonedDay, zonedDate, zonedDayRange } from '../../src/lib/time';
import { isTimeZone, normaliseBaseUrl, siteSettingsInput } from '../../src/lib/site-settings';
import { safeCell } from '../../src/lib/csv';
import { auditFilterQuery, toAuditFilter } from '../../src/lib/audit-filter';
import { currentHref, navFor } from '../../src/lib/nav';

// Offsets below are from the IANA time zone database (tzdata): Pacific/Auckland is UTC+12 (NZST) in
// winter and UTC+13 (NZDT) from the last Sunday of September to the first Sunday of April;
// America/Havana moves its clocks at midnight (00:00 → 01:00 in March, 01:00 → 00:00 in November).
describe('days in a time zone', () => {
  it('finds the first instant of a day in Auckland, winter and summer', () => {
    expect(startOfZonedDay('2026-07-01', 'Pacific/Auckland').toISOString()).toBe('2026-06-30T12:00:00.000Z');
    expect(startOfZonedDay('2026-12-02', 'Pacific/Auckland').toISOString()).toBe('2026-12-01T11:00:00.000Z');
    expect(offsetMinutes(new Date('2026-01-15T00:00:00Z'), 'Pacific/Auckland')).toBe(780);
    expect(offsetMinutes(new Date('2026-07-15T00:00:00Z'), 'Pacific/Auckland')).toBe(720);
  });

  it('handles the days clocks change: 23- and 25-hour days', () => {
    // NZ daylight saving starts on Sunday 27 September 2026 and ends on Sunday 5 April 2026
    const springDay = startOfZonedDay(nextDate('2026-09-27'), 'Pacific/Auckland').getTime() - startOfZonedDay('2026-09-27', 'Pacific/Auckland').getTime();
    expect(springDay / 3_600_000).toBe(23);
    const autumnDay = startOfZonedDay('2026-04-06', 'Pacific/Auckland').getTime() - startOfZonedDay('2026-04-05', 'Pacific/Auckland').getTime();
    expect(autumnDay / 3_600_000).toBe(25);
  });

  it('where midnight does not exist, the day starts at the first time that does', () => {
    // Havana, 8 March 2026: 00:00 becomes 01:00 CDT (UTC−4)
    expect(startOfZonedDay('2026-03-08', 'America/Havana').toISOString()).toBe('2026-03-08T05:00:00.000Z');
    // Havana, 1 November 2026: midnight happens twice; the day starts at the first (CDT, UTC−4)
    expect(startOfZonedDay('2026-11-01', 'America/Havana').toISOString()).toBe('2026-11-01T04:00:00.000Z');
  });

  it('turns an inclusive range of days into [start, end) instants, and shows instants back', () => {
    const r = zonedDayRange('2026-07-01', '2026-07-31', 'Pacific/Auckland');
    expect(r.start?.toISOString()).toBe('2026-06-30T12:00:00.000Z');
    expect(r.end?.toISOString()).toBe('2026-07-31T12:00:00.000Z');
    expect(zonedDayRange(undefined, undefined, 'UTC')).toEqual({});
    expect(isoLocal(new Date('2026-06-30T12:00:00Z'), 'Pacific/Auckland')).toBe('2026-07-01 00:00:00');
    expect(zonedDate(new Date('2026-06-30T11:59:59Z'), 'Pacific/Auckland')).toBe('2026-06-30');
    expect(nextDate('2026-12-31')).toBe('2027-01-01');
    expect(nextDate('2028-02-28')).toBe('2028-02-29');
  });

  it('accepts only real calendar dates', () => {
    expect(isCalendarDate('2028-02-29')).toBe(true);
    for (const bad of ['2026-02-29', '2026-13-01', '2026-1-1', '01/07/2026', '', '2026-07-01T00:00']) expect(isCalendarDate(bad), bad).toBe(false);
    expect(() => startOfZonedDay('2026-02-30', 'UTC')).toThrow(RangeError);
  });
});

describe('the audit filter', () => {
  it('reads empty values as no filter and refuses an end before the start', () => {
    expect(auditFilterQuery.parse({ actor: '', kind: '', from: '', to: '' })).toEqual({});
    expect(auditFilterQuery.safeParse({ from: '2026-07-02', to: '2026-07-01' }).success).toBe(false);
    const f = toAuditFilter(auditFilterQuery.parse({ kind: 'role.changed', from: '2026-07-01', to: '2026-07-01' }), 'Pacific/Auckland');
    expect(f).toEqual({ kind: 'role.changed', from: new Date('2026-06-30T12:00:00Z'), to: new Date('2026-07-01T12:00:00Z') });
  });
});

describe('site settings', () => {
  const good = { name: 'Tidewater', timeZone: 'Pacific/Auckland', currency: 'nzd', taxRatePercent: 15, pricesIncludeTax: true, publicBaseUrl: null };

  it('accepts IANA zones (and UTC) only', () => {
    expect(isTimeZone('Pacific/Auckland')).toBe(true);
    expect(isTimeZone('UTC')).toBe(true);
    expect(isTimeZone('Mars/Olympus_Mons')).toBe(false);
    expect(isTimeZone('NZST')).toBe(false);
  });

  it('normalises the currency and the public address', () => {
    const v = siteSettingsInput.parse({ ...good, publicBaseUrl: ' https://Laser.Example.org/lab/ ' });
    expect(v.currency).toBe('NZD');
    expect(v.publicBaseUrl).toBe('https://laser.example.org/lab');
    expect(siteSettingsInput.parse({ ...good, publicBaseUrl: '' }).publicBaseUrl).toBeNull();
    expect(normaliseBaseUrl('http://127.0.0.1:4321/')).toBe('http://127.0.0.1:4321');
    expect(normaliseBaseUrl('https://user:pw@laser.example')).toBeNull();
    expect(normaliseBaseUrl('mailto:a@b.c')).toBeNull();
  });

  it('keeps tax rates to three decimals within 0–100 %', () => {
    expect(siteSettingsInput.safeParse({ ...good, taxRatePercent: 8.875 }).success).toBe(true);
    expect(siteSettingsInput.safeParse({ ...good, taxRatePercent: 0 }).success).toBe(true);
    expect(siteSettingsInput.safeParse({ ...good, taxRatePercent: 8.8751 }).success).toBe(false);
    expect(siteSettingsInput.safeParse({ ...good, taxRatePercent: Number.NaN }).success).toBe(false);
    expect(siteSettingsInput.safeParse({ ...good, taxRatePercent: 100.001 }).success).toBe(false);
    expect(siteSettingsInput.safeParse({ ...good, currency: 'ABC' }).success).toBe(false);
  });
});

describe('CSV cells', () => {
  it('defuses cells a spreadsheet would run as formulas (common practice: OWASP CSV injection)', () => {
    expect(safeCell('=1+1')).toBe("'=1+1");
    expect(safeCell('+64 21 000')).toBe("'+64 21 000");
    expect(safeCell('-3')).toBe("'-3");
    expect(safeCell('@SUM(A1)')).toBe("'@SUM(A1)");
    expect(safeCell('Roles of Ana: +steward')).toBe('Roles of Ana: +steward');
    expect(safeCell(null)).toBe('');
    expect(safeCell({ roles: ['member'] })).toBe('{"roles":["member"]}');
  });
});

describe('admin navigation', () => {
  it('admins see Admin, Site and Audit; members do not', () => {
    expect(navFor(['admin']).map((n) => n.href)).toEqual(expect.arrayContaining(['/admin', '/admin/site', '/admin/audit', '/admin/people']));
    expect(navFor(['member', 'steward', 'instructor']).map((n) => n.href)).not.toContain('/admin');
  });

  it('marks only the deepest matching entry as current', () => {
    const items = navFor(['admin']);
    expect(currentHref(items, '/admin/audit')).toBe('/admin/audit');
    expect(currentHref(items, '/admin')).toBe('/admin');
    expect(currentHref(items, '/')).toBe('/');
    expect(currentHref(items, '/admin/people/123')).toBe('/admin/people');
  });
});
