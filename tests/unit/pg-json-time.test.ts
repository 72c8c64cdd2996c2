import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { isoFromPgJson } from '@lib/server/pg-types';

// PostgreSQL writes a timestamptz inside json as ISO 8601 with the session's offset and up to six fraction digits,
// trailing zeros dropped (PostgreSQL's documentation, "JSON Types" and "Date/Time Output", ISO style).
describe('a timestamptz from PostgreSQL json, as Date#toISOString writes it', () => {
  it('whole seconds, a fraction of one to six digits, and a leap-year day', () => {
    expect(isoFromPgJson('2026-12-04T09:30:00+00:00')).toBe('2026-12-04T09:30:00.000Z');
    expect(isoFromPgJson('2026-12-04T09:30:00.5+00:00')).toBe('2026-12-04T09:30:00.500Z');
    expect(isoFromPgJson('2026-12-04T09:30:00.28+00:00')).toBe('2026-12-04T09:30:00.280Z');
    expect(isoFromPgJson('2026-12-04T09:30:00.282+00:00')).toBe('2026-12-04T09:30:00.282Z');
    expect(isoFromPgJson('2026-12-04T09:30:00.282999+00:00')).toBe('2026-12-04T09:30:00.282Z');
    expect(isoFromPgJson('2028-02-29T23:59:59.999999+00:00')).toBe('2028-02-29T23:59:59.999Z');
  });

  it('another offset (a connection not in UTC) is read through Date', () => {
    expect(isoFromPgJson('2026-12-04T10:30:00+01:00')).toBe('2026-12-04T09:30:00.000Z');
    expect(isoFromPgJson('2026-06-30T20:15:00.25-04:00')).toBe('2026-07-01T00:15:00.250Z');
  });

  it('agrees with Date for any instant written the way PostgreSQL writes it in UTC', () => {
    const pgText = (ms: number, micros: number) => {
      const base = new Date(ms - (ms % 1000)).toISOString().slice(0, 19);
      const digits = String((ms % 1000) * 1000 + micros).padStart(6, '0').replace(/0+$/, '');
      return `${base}${digits ? `.${digits}` : ''}+00:00`;
    };
    fc.assert(fc.property(fc.integer({ min: Date.UTC(1970, 0, 1), max: Date.UTC(9999, 11, 31) }), fc.integer({ min: 0, max: 999 }), (ms, micros) => {
      const text = pgText(ms, micros);
      expect(isoFromPgJson(text)).toBe(new Date(text).toISOString());
    }), { numRuns: 2000 });
  });
});
