/**
 * Every CSV file is spreadsheet-safe: a byte-order mark, CRLF, text that looks like a formula kept as text, money
 * in major units with the currency in the heading. Here the recharge file, whose cells carry people's names and
 * e-mail addresses (the report files are checked in reports.test.ts, the audit file in admin-console.test.ts). And
 * dates typed into forms must be real calendar dates.
 */
import { randomUUID } from 'node:crypto';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { createPerson, setTier } from '../../src/lib/server/people';
import { chargeBeamTime } from '../../src/lib/server/payments/billing';
import { zonedDate } from '../../src/lib/time';
import { Client } from '../support/client';
import { closeTestDb, testDb } from '../support/db';

let laserA: string;
let adminId: string;

beforeAll(async () => {
  laserA = (await testDb()('machines').where({ code: 'laser-a' }).first('id')).id;
  adminId = (await testDb()('people').where({ email: 'admin@tidewater.example' }).first('id')).id;
});

afterAll(async () => {
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

describe('the recharge CSV', () => {
  it('escapes a name and an e-mail that start like formulas, and gives amounts in major units with the currency', async () => {
    const tag = randomUUID().slice(0, 8);
    const email = `=cmd-${tag}@test.example`;
    const p = await createPerson({ email: `csv-${tag}@test.example`, name: `=HYPERLINK("http://x.invalid") ${tag}`, password: 'a long test password', roles: ['member'] });
    await testDb()('people').where({ id: p.id }).update({ email });
    const centre = `CSV-${tag.slice(0, 4).toUpperCase()}`;
    await setTier(adminId, p.id, 'student', centre);
    const charge = await chargeBeamTime({ personId: p.id, machineId: laserA, sessionId: randomUUID(), startedAt: new Date(), minutes: 12 });
    expect(charge).toMatchObject({ method: 'recharge', state: 'recharged' });

    const month = zonedDate(new Date(), 'Pacific/Auckland').slice(0, 7);
    const res = await (await Client.as('admin')).get(`/api/reports/recharge.csv?month=${month}&costCentre=${centre}`);
    expect(res.status).toBe(200);
    // read the bytes: fetch's text() drops a byte-order mark while decoding
    const bytes = Buffer.from(await res.arrayBuffer());
    expect([...bytes.subarray(0, 3)]).toEqual([0xef, 0xbb, 0xbf]);
    const text = bytes.toString('utf8');
    expect(text.split('\r\n').length).toBeGreaterThan(2);
    const rows = Papa.parse<string[]>(text.replace(/^\uFEFF/, '').trim()).data;
    const [heading, line, total] = rows as [string[], string[], string[]];
    expect(heading).toEqual(['date', 'cost_centre', 'person', 'email', 'machine', 'kind', 'minutes', 'amount (NZD)', 'tax_included (NZD)', 'charge_id']);
    expect(line[heading.indexOf('person')]).toBe(`'=HYPERLINK("http://x.invalid") ${tag}`);
    expect(line[heading.indexOf('email')]).toBe(`'${email}`);
    expect(line[heading.indexOf('date')]).toMatch(/^\d{4}-\d{2}-\d{2}$/);
    expect(line[heading.indexOf('amount (NZD)')]).toBe((charge.amountMinor / 100).toFixed(2));
    expect(total[0]).toBe('TOTAL');
  });
});

describe('dates typed into forms are real calendar dates', () => {
  it('a price version dated 2026-02-31 is refused (it used to become 3 March)', async () => {
    const res = await (await Client.as('admin')).send('POST', '/api/pricing/versions', {
      effectiveDate: '2026-02-31', incrementMinutes: 5, minimumChargeMinor: 0, dailyCapMinor: null, lateCancelFeeMinor: 0, noShowFeeMinor: 0,
      minimumRule: 'carry', rechargeTiers: [], materials: [], note: 'not a date', rates: [{ machineId: laserA, tier: 'community', perMinuteMinor: 1 }],
    });
    expect(res.status).toBe(422);
    const err = (await res.json()) as { error: { code: string; fields: Record<string, string> } };
    expect(err.error.code).toBe('invalid');
    expect(Object.keys(err.error.fields)).toContain('effectiveDate');
    expect(await testDb()('price_versions').where({ note: 'not a date' }).first()).toBeUndefined();
  });
});
