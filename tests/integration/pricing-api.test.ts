/** Quotes, price versions and tiers through the API: roles, validation, versions by effective date, audit. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { newPerson } from '../support/people';

let laserA: string;
let laserB: string;
let admin: Client;
let member: Client;

beforeAll(async () => {
  const machines = await testDb()('machines').select('id', 'code');
  laserA = machines.find((m) => m.code === 'laser-a')!.id;
  laserB = machines.find((m) => m.code === 'laser-b')!.id;
  admin = await Client.as('admin');
  member = await Client.as('member');
});
afterAll(async () => {
  await closeTestDb();
});

describe('POST /api/tools/quote', () => {
  it('prices by machine × tier with the breakdown (seeded NZD prices, 15 % GST inclusive)', async () => {
    const res = await member.send('POST', '/api/tools/quote', { machineId: laserB, tier: 'commercial', minutes: 7, materials: [{ sku: 'mdf-3', quantity: 1 }] });
    expect(res.status).toBe(200);
    const q = await body(res);
    // 7 → 10 min × 150 + one MDF sheet 400 = 1900; GST 15/115 of 1900 = 247.83 → 248 (NZ GST 15 %: statutory rate, Goods and Services Tax Act 1985 s 8, from memory)
    expect(q).toMatchObject({ currency: 'NZD', amountMinor: 1900, taxMinor: 248, taxMode: 'inclusive' });
    expect(q.lines.map((l: { kind: string }) => l.kind)).toEqual(['beam_time', 'material']);
  });
  it('needs a session, and answers bad input with 422 fields', async () => {
    const anon = new Client();
    expect((await anon.send('POST', '/api/tools/quote', { machineId: laserA, tier: 'student', minutes: 5 })).status).toBe(401);
    const bad = await member.send('POST', '/api/tools/quote', { machineId: laserA, tier: 'gold', minutes: -1 });
    expect(bad.status).toBe(422);
    expect(Object.keys((await body(bad)).error.fields)).toEqual(expect.arrayContaining(['tier', 'minutes']));
    const unsold = await member.send('POST', '/api/tools/quote', { machineId: laserA, tier: 'student', minutes: 5, materials: [{ sku: 'pvc-3', quantity: 1 }] });
    expect(unsold.status).toBe(422);
    expect((await body(unsold)).error.code).toBe('unknown_material');
  });
});

describe('price versions', () => {
  // far past every booking other files make (at most 35 days ahead): this version prices only Laser A for community
  const future = new Date(Date.now() + 200 * 86_400_000).toISOString().slice(0, 10);
  const draft = (over: Record<string, unknown> = {}) => ({
    effectiveDate: future,
    incrementMinutes: 5,
    minimumChargeMinor: 500,
    dailyCapMinor: 12000,
    lateCancelFeeMinor: 1000,
    noShowFeeMinor: 1500,
    minimumRule: 'carry',
    rechargeTiers: ['student', 'staff'],
    materials: [{ sku: 'ply-3', name: '3 mm plywood', priceMinor: 700 }],
    note: 'Tube replacement costs',
    rates: [{ machineId: laserA, tier: 'community', perMinuteMinor: 120 }],
    ...over,
  });

  it('a version with a future effective date leaves today\'s quotes alone; quotes at that date use it; audited', async () => {
    const created = await admin.send('POST', '/api/pricing/versions', draft());
    expect(created.status).toBe(201);
    const v = await body(created);
    const now = await body(await member.send('POST', '/api/tools/quote', { machineId: laserA, tier: 'community', minutes: 10 }));
    expect(now.amountMinor).toBe(900); // old rate 90/min
    const later = await body(await member.send('POST', '/api/tools/quote', { machineId: laserA, tier: 'community', minutes: 10, at: new Date(Date.parse(v.effectiveFrom) + 3_600_000).toISOString() }));
    expect(later.amountMinor).toBe(1200);
    expect(later.priceVersionId).toBe(v.id);
    const list = await body(await admin.get('/api/pricing/versions'));
    expect(list.versions.length).toBeGreaterThanOrEqual(2);
    expect(list.versions.map((x: { id: string }) => x.id)).toContain(v.id);
    // the history is newest effective date first
    const starts = list.versions.map((x: { effectiveFrom: string }) => Date.parse(x.effectiveFrom));
    expect(starts).toEqual([...starts].sort((a: number, b: number) => b - a));
    const audit = await testDb()('audit_log').where({ kind: 'price.version_created', subject_id: v.id }).first();
    expect(audit?.summary).toContain('Tube replacement costs');
    const dup = await admin.send('POST', '/api/pricing/versions', draft());
    expect(dup.status).toBe(409);
  });
  it('refuses a past date, bad fields, and anyone but an admin', async () => {
    expect((await admin.send('POST', '/api/pricing/versions', draft({ effectiveDate: '2020-01-01' }))).status).toBe(422);
    const bad = await admin.send('POST', '/api/pricing/versions', draft({ lateCancelFeeMinor: -1, incrementMinutes: 0, minimumChargeMinor: 1.5 }));
    expect(bad.status).toBe(422);
    expect(Object.keys((await body(bad)).error.fields)).toEqual(expect.arrayContaining(['lateCancelFeeMinor', 'incrementMinutes', 'minimumChargeMinor']));
    // currency and tax are the site's: a version body cannot carry them
    const taxed = await admin.send('POST', '/api/pricing/versions', draft({ taxRateBp: 1000, currency: 'EUR' }));
    expect(taxed.status).toBe(422);
    expect((await member.send('POST', '/api/pricing/versions', draft())).status).toBe(403);
    expect((await member.get('/api/pricing/versions')).status).toBe(403);
    const steward = await Client.as('steward');
    expect((await steward.send('POST', '/api/pricing/versions', draft())).status).toBe(403);
  });
});

describe('the site\'s tax and currency', () => {
  it('a tax change on Site applies to the next quote; the currency cannot change once charges exist', async () => {
    const site = await body(await admin.get('/api/site'));
    const { updatedAt: _u, ...restore } = site;
    try {
      const put = await admin.send('PUT', '/api/site', { ...restore, taxRatePercent: 8.875, pricesIncludeTax: false });
      expect(put.status, await put.clone().text()).toBe(200);
      const q = await body(await member.send('POST', '/api/tools/quote', { machineId: laserB, tier: 'commercial', minutes: 7, materials: [{ sku: 'mdf-3', quantity: 1 }] }));
      // 1900 before tax; 8.875 % added (a US city sales tax rate, from memory) = 168.625 → 169 (half-up); the breakdown names the rate it used
      expect(q).toMatchObject({ subtotalMinor: 1900, taxMinor: 169, amountMinor: 2069, taxMode: 'exclusive', taxRateBp: 887.5 });

      expect(await testDb()('charges').whereNot('currency', 'EUR').first('id')).toBeTruthy(); // the seeded history charged NZD
      const eur = await admin.send('PUT', '/api/site', { ...restore, currency: 'EUR' });
      expect(eur.status).toBe(409);
      expect((await body(eur)).error.code).toBe('currency_in_use');
      expect((await body(await admin.get('/api/site'))).currency).toBe('NZD');
    } finally {
      expect((await admin.send('PUT', '/api/site', restore)).status).toBe(200);
    }
    const back = await body(await member.send('POST', '/api/tools/quote', { machineId: laserB, tier: 'commercial', minutes: 7, materials: [{ sku: 'mdf-3', quantity: 1 }] }));
    expect(back).toMatchObject({ amountMinor: 1900, taxMinor: 248, taxMode: 'inclusive', taxRateBp: 1500 });
  });
});

describe('tiers', () => {
  it('an admin sets a person\'s tier and cost centre (audited); a member may not; the account shows it', async () => {
    // a person of this file's own (the demo newbie's tier is the demo's)
    const newbie = await newPerson('tier');
    const res = await admin.send('PUT', `/api/people/${newbie.id}/tier`, { tier: 'staff', costCentre: 'ENG-200' });
    expect(res.status).toBe(200);
    expect(await body(res)).toMatchObject({ tier: 'staff', costCentre: 'ENG-200' });
    expect(await testDb()('audit_log').where({ kind: 'person.tier_changed', subject_id: newbie.id }).first()).toBeTruthy();
    expect((await member.send('PUT', `/api/people/${newbie.id}/tier`, { tier: 'student' })).status).toBe(403);
    expect((await admin.send('PUT', `/api/people/${newbie.id}/tier`, { tier: 'gold' })).status).toBe(422);
    const n = newbie.client;
    expect(await body(await n.get('/api/account'))).toMatchObject({ tier: 'staff', costCentre: 'ENG-200', recharge: true, card: null, balanceOwedMinor: 0 });
    await admin.send('PUT', `/api/people/${newbie.id}/tier`, { tier: 'community', costCentre: null });
    const people = await body(await admin.get('/api/people?q=student@'));
    expect(people.rows[0]).toMatchObject({ tier: 'student', costCentre: 'DES101' });
  });
  it('the account charges list is the person\'s own, paged and sortable', async () => {
    const res = await member.get('/api/account/charges?sort=amount&dir=asc&pageSize=5');
    expect(res.status).toBe(200);
    const page = await body(res);
    expect(page).toMatchObject({ page: 1, pageSize: 5 });
    expect((await member.get('/api/account/charges?sort=colour')).status).toBe(422);
    expect((await new Client().get('/api/account/charges')).status).toBe(401);
  });
});
