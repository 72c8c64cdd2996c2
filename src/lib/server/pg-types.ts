/**
 * How PostgreSQL values come back to JavaScript, for every pool of the process (pg's parsers are global): the app's
 * (db.ts) and the tests' own (tests/support/db.ts), so a count reads the same whichever module a process loaded first.
 */
import pg from 'pg';

// timestamptz → JS Date (the default); bigint counts (COUNT(*)) → number when they fit.
pg.types.setTypeParser(pg.types.builtins.INT8, (v: string) => {
  const n = Number(v);
  return Number.isSafeInteger(n) ? n : v;
});
// numeric → number (rates and measurements here stay well inside double precision; money is integer minor units)
pg.types.setTypeParser(pg.types.builtins.NUMERIC, (v: string) => Number(v));

/**
 * A timestamptz as PostgreSQL writes it inside json (`2026-12-04T09:30:00+00:00`, or with up to six fraction digits)
 * in the ISO form `Date.prototype.toISOString` gives (`2026-12-04T09:30:00.000Z`, milliseconds truncated as `Date`
 * truncates them), without making a Date. The app's connections run in UTC (db.ts), so the offset is `+00:00`; any
 * other text is read through `Date`. For answers that pass many times straight through to JSON (the week feed):
 * `JSON.stringify` is several times slower on objects holding Dates than on strings.
 */
export function isoFromPgJson(text: string): string {
  if (text.length >= 25 && text.length <= 32 && text[10] === 'T' && text.endsWith('+00:00') && (text.length === 25 || text[19] === '.')) {
    const fraction = text.length === 25 ? '' : text.slice(20, -6);
    return `${text.slice(0, 19)}.${(fraction + '000').slice(0, 3)}Z`;
  }
  return new Date(text).toISOString();
}
