/**
 * Booking wired to materials and billing: declared materials checked and stored, 402 after a failed payment,
 * the card hold placed after the booking commits (or a paymentNotice without a card), released on an in-time
 * cancel, and deactivation cancelling a person's future bookings.
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { chargeBookingFee } from '../../src/lib/server/payments/intents';
import { saveCard } from '../../src/lib/server/payments/cards';
import { createPerson } from '../../src/lib/server/people';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { newPerson, type TestPerson } from '../support/people';
import { iso, machines, setTestRules, siteTime, type MachineRef } from '../support/booking';
import { expectError } from '../support/api-error';
import { waitUntil } from '../support/wait';
import { createTestMachine, retireTestMachine } from '../support/machine';
import { clearedNew } from '../support/people';

let admin: Client;
let member: Client;
/** this file's own people (no other file's quota, card or failed payment): a member, a staff person without a card, one with a card */
let staff: TestPerson;
let carded: TestPerson;
let lasers: Record<'laser-a' | 'laser-b' | 'laser-c', MachineRef>;
let mat: Record<string, string>;
// 33 days ahead (inside the 35-day test horizon): a week no other file books in, so the weekly quota is untouched
const D = 33;

beforeAll(async () => {
  admin = await Client.as('admin');
  member = (await newPerson('mb-member', { clearedFor: ['laser-a', 'laser-b', 'laser-c'] })).client;
  staff = await newPerson('mb-staff', { tier: 'staff', clearedFor: ['laser-a', 'laser-b', 'laser-c'] });
  carded = await newPerson('mb-card', { tier: 'staff', clearedFor: ['laser-a', 'laser-b', 'laser-c'] });
  lasers = await machines(admin);
  for (const m of Object.values(lasers)) await setTestRules(admin, m.id);
  const rows = await testDb()('materials').select('id', 'name');
  mat = Object.fromEntries(rows.map((r: { id: string; name: string }) => [r.name, r.id]));
});

afterAll(async () => {
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

const book = (c: Client, machineId: string, startsAt: Date, endsAt: Date, materials: unknown[] = []) =>
  c.send('POST', '/api/bookings', { machineId, startsAt: iso(startsAt), endsAt: iso(endsAt), materials, notes: '' });

describe('declared materials', () => {
  it('PVC is refused with the reason (422 material_blocked) and nothing is booked', async () => {
    const a = lasers['laser-a'].id;
    const e = await expectError(await book(member, a, siteTime(D, 10), siteTime(D, 11), [{ materialId: mat['PVC and vinyl'], thicknessMm: 3, mode: 'cut' }]), 422, 'material_blocked');
    expect(e.message).toMatch(/PVC/);
    expect(await testDb()('bookings').where({ machine_id: a, starts_at: siteTime(D, 10) }).whereIn('state', ['reserved']).first()).toBeUndefined();
  });

  it('acrylic 3 mm cut is booked (201) and the declaration is stored with the booking', async () => {
    const res = await book(member, lasers['laser-a'].id, siteTime(D, 10), siteTime(D, 11), [
      { materialId: mat['Acrylic (PMMA)'], thicknessMm: 3, mode: 'cut' },
      { materialId: mat['Plywood (birch or poplar)'], thicknessMm: 3, mode: 'engrave' },
    ]);
    const b = await body(res);
    expect(res.status, JSON.stringify(b)).toBe(201);
    const rows = await testDb()('booking_materials').where({ booking_id: b.id }).orderBy('id');
    expect(rows.map((r: { material_id: string; mode: string; thickness_mm: string }) => [r.material_id, r.mode, Number(r.thickness_mm)])).toEqual([
      [mat['Acrylic (PMMA)'], 'cut', 3],
      [mat['Plywood (birch or poplar)'], 'engrave', 3],
    ]);
  });

  it('anodised aluminium may only be engraved: cutting it is 422 material_limited', async () => {
    await expectError(await book(member, lasers['laser-a'].id, siteTime(D, 14), siteTime(D, 15), [{ materialId: mat['Anodised aluminium'], thicknessMm: 1, mode: 'cut' }]), 422, 'material_limited');
    expect((await book(member, lasers['laser-a'].id, siteTime(D, 14), siteTime(D, 15), [{ materialId: mat['Anodised aluminium'], thicknessMm: 1, mode: 'engrave' }])).status).toBe(201);
  });
});

describe('billing at booking', () => {
  it('402 payment_required while a payment has failed; booking works again once it is settled', async () => {
    const who = staff;
    // a late-cancellation fee with no card on file fails: that is a failed payment
    const fee = await chargeBookingFee({ personId: who.id, machineId: lasers['laser-c'].id, bookingId: randomUUID(), startsAt: new Date(), fee: 'late_cancellation' });
    expect(fee.state).toBe('payment failed');
    await expectError(await book(staff.client, lasers['laser-c'].id, siteTime(D, 10), siteTime(D, 11)), 402, 'payment_required');
    await testDb()('charges').where({ id: fee.id }).update({ state: 'waived' });
    const res = await book(staff.client, lasers['laser-c'].id, siteTime(D, 10), siteTime(D, 11));
    const b = await body(res);
    expect(res.status, JSON.stringify(b)).toBe(201);
    // this person has no saved card: the booking stands, beam time is charged at check-out, and the answer says so
    expect(b.paymentNotice).toMatch(/check-out/);
    expect(await testDb()('charges').where({ booking_id: b.id }).first()).toBeUndefined();
  });

  it('on a machine with no price for the tier (and no saved card) the booking stands and the answer says nothing is held', async () => {
    const m = await createTestMachine(admin, 'noprice'); // a new machine: no rate in the price version in force
    try {
      await setTestRules(admin, m.id);
      const who = await clearedNew('noprice', [m.code]);
      const res = await book(who.client, m.id, siteTime(D, 12), siteTime(D, 13));
      const b = await body(res);
      expect(res.status, JSON.stringify(b)).toBe(201);
      expect(b.payment).toEqual({ state: 'none' });
      expect(b.paymentNotice).toMatch(/no price for your tier/);
      expect(await testDb()('charges').where({ booking_id: b.id }).first()).toBeUndefined();
    } finally {
      await retireTestMachine(admin, m);
    }
  });

  it('with a saved card the estimate is held; an in-time cancel releases the hold and charges no fee', async () => {
    await saveCard(carded.id, 'tok_visa');
    const b = await body(await book(carded.client, lasers['laser-b'].id, siteTime(D, 16), siteTime(D, 17)));
    expect(b.paymentNotice, JSON.stringify(b)).toBeNull();
    const hold = await testDb()('charges').where({ booking_id: b.id, kind: 'beam_time' }).first();
    expect(hold.state).toBe('held');
    expect(hold.held_minor).toBeGreaterThan(0);
    expect((await carded.client.send('POST', `/api/bookings/${b.id}/cancel`)).status).toBe(200);
    expect((await testDb()('charges').where({ id: hold.id }).first()).state).toBe('released');
    expect(await testDb()('charges').where({ booking_id: b.id, kind: 'late_cancellation' }).first()).toBeUndefined();
  });
});

describe('deactivation', () => {
  it('cancels the person’s future reserved bookings (audited, holds released), and leaves past ones alone', async () => {
    const email = `leaving-${randomUUID().slice(0, 8)}@test.example`;
    const p = await createPerson({ email, name: 'Ari Leaving', password: 'a long test password', roles: ['member'] });
    const m = lasers['laser-c'].id;
    const at = (d: number, h: number) => siteTime(d, h);
    // written directly: the person has no clearance, and one booking is in the past
    const [f1, f2, past] = await testDb()('bookings')
      .insert([
        { machine_id: m, person_id: p.id, starts_at: at(D + 2, 9), ends_at: at(D + 2, 10), occupied_until: at(D + 2, 10) },
        { machine_id: m, person_id: p.id, starts_at: at(D + 3, 9), ends_at: at(D + 3, 10), occupied_until: at(D + 3, 10) },
        { machine_id: m, person_id: p.id, starts_at: at(-3, 9), ends_at: at(-3, 10), occupied_until: at(-3, 10), state: 'completed' },
      ])
      .returning('id');
    const [pending] = await testDb()('charges')
      .insert({ person_id: p.id, machine_id: m, booking_id: f1.id, tier: 'community', kind: 'beam_time', method: 'card', state: 'pending', currency: 'NZD', amount_minor: 1000, breakdown: '{}' })
      .returning('id');

    const res = await admin.send('POST', `/api/people/${p.id}/deactivate`);
    expect(res.status).toBe(200);
    const states = await testDb()('bookings').whereIn('id', [f1.id, f2.id, past.id]).select('id', 'state');
    const by = Object.fromEntries(states.map((s: { id: string; state: string }) => [s.id, s.state]));
    expect(by).toEqual({ [f1.id]: 'cancelled', [f2.id]: 'cancelled', [past.id]: 'completed' });
    const audit = await testDb()('audit_log').where({ kind: 'booking.cancelled', subject_id: f1.id }).first();
    expect(audit.summary).toMatch(/deactivated/);
    // released by the worker: the intent was recorded in the same transaction as the cancellations
    await waitUntil('the hold released', async () => (await testDb()('charges').where({ id: pending.id }).first()).state === 'released');
  });
});
