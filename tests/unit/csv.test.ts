import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { csvRows, majorUnits, moneyHeading, safeCell, toCsv } from '../../src/lib/csv';

describe('CSV files (RFC 4180; formula escaping is common practice, OWASP "CSV injection")', () => {
  it('starts with a byte-order mark, ends lines with CRLF and round-trips accents, quotes and commas', () => {
    const text = toCsv(['name', 'note'], [['Mārama Tūhoe', 'says "hi", then leaves'], ['Zoë', 'line\nbreak']]);
    expect(text.charCodeAt(0)).toBe(0xfeff);
    expect(text.endsWith('\r\n')).toBe(true);
    const parsed = Papa.parse<Record<string, string>>(text.slice(1), { header: true, skipEmptyLines: true });
    expect(parsed.data).toEqual([{ name: 'Mārama Tūhoe', note: 'says "hi", then leaves' }, { name: 'Zoë', note: 'line\nbreak' }]);
  });

  it('keeps every text cell that starts like a formula as text, but leaves numbers alone', () => {
    const line = csvRows([['=1+1', '+61 4', '-x', '@SUM(A1)', '\tTAB', -5, 12.5, null]]).trim();
    expect(Papa.parse<string[]>(line).data[0]).toEqual(["'=1+1", "'+61 4", "'-x", "'@SUM(A1)", "'\tTAB", '-5', '12.5', '']);
    expect(safeCell({ a: 1 })).toBe('{"a":1}');
  });

  it('writes money in major units with the currency in the heading (ISO 4217 exponents: NZD 2, JPY 0, BHD 3)', () => {
    expect(majorUnits(123456, 'NZD')).toBe('1234.56');
    expect(majorUnits(-5, 'NZD')).toBe('-0.05');
    expect(majorUnits(1234, 'JPY')).toBe('1234');
    expect(majorUnits(1234, 'BHD')).toBe('1.234');
    expect(moneyHeading('net_minor', 'nzd')).toBe('net (NZD)');
  });
});
