/** A machine of the test's own (stop faults on it bump nobody else's bookings); retire it afterwards. */
import { expect } from 'vitest';
import { Client, body } from './client';
import { testDb } from './db';

export interface TestMachine {
  id: string;
  code: string;
  name: string;
}

export async function createTestMachine(admin: Client, label: string): Promise<TestMachine> {
  const groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const stamp = Date.now().toString(36);
  const code = `t-${label}-${stamp}`.slice(0, 32);
  const name = `Test laser ${label} ${stamp}`;
  const res = await admin.send('POST', '/api/machines', {
    code, name, groupId, requiredLevel: 'basic', powerW: 40, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 500, bedDepthMm: 300, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  return { id: m.id, code, name };
}

export async function retireTestMachine(admin: Client, m: TestMachine | undefined): Promise<void> {
  if (m) await admin.send('POST', `/api/machines/${m.id}/retire`, { reason: 'Test machine, no longer needed.' });
}
