/** A machine of the test's own (stop faults on it bump nobody else's bookings); retire it afterwards. */
import { expect } from 'vitest';
import { Client, body } from './client';
import { testDb } from './db';

export interface TestMachine {
  id: string;
  code: string;
  name: string;
}

/**
 * Added through the admin API (which gives it default rules and opening hours), in the first demo group (the
 * clearance tests read the seeded groups: a file adds no group it leaves behind), or in `inGroup`, a group of the
 * file's own (support/group.ts).
 */
export async function createTestMachine(admin: Client, label: string, inGroup?: string): Promise<TestMachine & { groupId: string }> {
  const stamp = `${Date.now().toString(36)}${process.pid.toString(36)}`;
  const groupId = inGroup ?? ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const code = `t-${label.slice(0, 29 - stamp.length)}-${stamp}`;
  const name = `Test laser ${label} ${stamp}`;
  const res = await admin.send('POST', '/api/machines', {
    code, name, groupId, requiredLevel: 'basic', powerW: 40, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 500, bedDepthMm: 300, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  return { id: m.id, code, name, groupId };
}

export async function retireTestMachine(admin: Client, m: TestMachine | undefined): Promise<void> {
  if (m) await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'Test machine, no longer needed.' });
}

/**
 * Rates for a test machine in every price version there is, written directly: publishing a version through the API
 * would reprice every machine for every other file. A machine without a rate is "not priced" (no card hold, no charge).
 */
export async function priceTestMachine(machineId: string, perMinuteMinor: number): Promise<void> {
  const versions = (await testDb()('price_versions').select('id')) as { id: string }[];
  for (const v of versions) {
    await testDb()('price_rates')
      .insert(['student', 'staff', 'community', 'commercial'].map((tier) => ({ version_id: v.id, machine_id: machineId, tier, per_minute_minor: perMinuteMinor })))
      .onConflict(['version_id', 'machine_id', 'tier']).ignore();
  }
}
