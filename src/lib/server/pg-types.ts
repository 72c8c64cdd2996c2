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
