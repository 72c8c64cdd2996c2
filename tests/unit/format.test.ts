/**
 * The site's formatting, by locale and zone. Expected strings are what CLDR (through Node's Intl) writes for each
 * locale; amounts use the ISO 4217 exponents (REFERENCE.md › Money: JPY 0, BHD 3; INR 2 from memory of the list).
 */
import { describe, expect, it } from 'vitest';
import { isLocale, siteFormat } from '../../src/lib/format';

const at = new Date('2026-12-03T01:05:00Z'); // 14:05 on Thursday 3 December 2026 in Pacific/Auckland (UTC+13)
const nbsp = (s: string) => s.replace(/[\u00a0\u202f]/g, ' ');

describe('site formatting', () => {
  it('writes dates with a four-digit year in the site zone, whatever the machine zone', () => {
    const nz = siteFormat('en-NZ', 'Pacific/Auckland');
    expect(nz.date(at)).toBe('3 Dec 2026');
    expect(nz.longDate(at)).toBe('Thursday, 3 December 2026');
    expect(nbsp(nz.time(at))).toMatch(/^2:05 pm$/i);
    const de = siteFormat('de-DE', 'Europe/Berlin');
    expect(de.date(at)).toBe('3. Dez. 2026');
    expect(de.time(at)).toBe('02:05'); // CLDR de: HH:mm
    const gb = siteFormat('en-GB', 'Europe/London');
    expect(gb.date(at)).toBe('3 Dec 2026');
    expect(gb.time(at)).toBe('01:05'); // CLDR en-GB: HH:mm
  });

  it('writes a range on one day with the day once', () => {
    const nz = siteFormat('en-GB', 'Pacific/Auckland');
    expect(nz.range(at, new Date(at.getTime() + 90 * 60_000))).toBe('Thu 3 Dec, 14:05–15:35');
    expect(nz.range(at, new Date(at.getTime() + 24 * 3_600_000))).toContain(' – ');
  });

  it('writes money with the currency\'s own digits and the locale\'s grouping (NZD 2, JPY 0, BHD 3, INR 2)', () => {
    expect(siteFormat('en-NZ', 'UTC').money(123456, 'NZD')).toBe('$1,234.56');
    expect(nbsp(siteFormat('de-DE', 'UTC').money(123456, 'EUR'))).toBe('1.234,56 €');
    expect(siteFormat('en-GB', 'UTC').money(1234, 'JPY')).toBe('JP¥1,234');
    expect(nbsp(siteFormat('en-GB', 'UTC').money(1234, 'BHD'))).toBe('BHD 1.234');
    expect(siteFormat('en-IN', 'UTC').money(12345678, 'INR')).toBe('₹1,23,456.78');
    expect(siteFormat('en-NZ', 'UTC').money(-5, 'NZD')).toBe('-$0.05');
    // twelve whole digits, the most a price field takes
    expect(siteFormat('en-NZ', 'UTC').money(123456789012345, 'NZD')).toBe('$1,234,567,890,123.45');
  });

  it('writes short amounts for chart axes in whole units of the currency', () => {
    expect(siteFormat('en-NZ', 'UTC').moneyShort(16000, 'NZD')).toBe('$160');
    expect(siteFormat('en-NZ', 'UTC').moneyShort(1600000, 'NZD')).toBe('$16K');
    expect(nbsp(siteFormat('de-DE', 'UTC').moneyShort(1600000, 'NZD'))).toBe('16.000 NZ$');
    expect(siteFormat('en-GB', 'UTC').moneyShort(1600, 'JPY')).toBe('JP¥1.6k');
  });

  it('numbers follow the locale', () => {
    expect(siteFormat('en-NZ', 'UTC').number(1234.5)).toBe('1,234.5');
    expect(nbsp(siteFormat('de-DE', 'UTC').number(1234.5))).toBe('1.234,5');
  });

  it('knows a locale from a bad tag, and falls back to the default for an unknown one', () => {
    expect(isLocale('en-NZ')).toBe(true);
    expect(isLocale('de-DE')).toBe(true);
    expect(isLocale('not a locale')).toBe(false);
    expect(siteFormat('not a locale', 'UTC').locale).toBe('en-NZ');
  });
});
