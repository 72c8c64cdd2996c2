/**
 * Journey: on a phone, a member reports a `stop` fault on a laser (one of its own) with a photo and sees the machine out of
 * service; at a desk the steward finds it first on the Faults screen, resolves it and puts the machine back
 * into service with the checks confirmed. Screenshots: the fault form (phone) and the Faults queue (desk).
 * The laser, the member and the steward are the file's own, so it runs beside other files (no demo person's faults
 * or mail change).
 */
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, shot, signIn, hydrated, settled, withBrowser } from '../support/browser';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { newPerson, type TestPerson } from '../support/people';

const web = withBrowser();
let admin: Client;
// a machine of this file's own: its stop fault bumps nobody else's bookings, so the file runs beside others
let laser: TestMachine;
let member: TestPerson;
let steward: TestPerson;

beforeAll(async () => {
  admin = await Client.as('admin');
  laser = await createTestMachine(admin, 'faultjourney');
  member = await newPerson('faultreporter');
  steward = await newPerson('faultsteward', { roles: ['steward'] });
});
afterAll(async () => {
  await retireTestMachine(admin, laser);
});

describe('a stop fault from the phone to the steward', () => {
  it('the member reports, the machine stops; the steward sees it and returns the machine to service', async () => {
    const photo = await sharp({ create: { width: 640, height: 480, channels: 3, background: { r: 90, g: 110, b: 130 } } }).jpeg().toBuffer();

    const { ctx: phone, page, errors } = await web.openAs(null, PHONE);
    // signed out: sign in first, then back to the same page
    await page.goto(`/m/${laser.code}/fault`);
    await hydrated(page);
    expect(page.url()).toContain('/signin');
    await signIn(page, member.email);
    expect(new URL(page.url()).pathname).toBe(`/m/${laser.code}/fault`);
    await page.getByRole('heading', { name: 'Report a fault' }).waitFor();

    await page.getByRole('radio', { name: /Stop/ }).check();
    await page.getByLabel('What happened?').fill('Smoke from the tube end, coolant alarm');
    await page.getByLabel(/More detail/).fill('Stopped the job and pressed the emergency stop. Water on the bed.');
    await page.locator('input[type=file]').setInputFiles({ name: 'tube.jpg', mimeType: 'image/jpeg', buffer: photo });
    await page.getByText('tube.jpg').waitFor();
    await shot(page, 'fault-form-phone');
    await page.getByRole('button', { name: 'Send the report' }).click();
    await page.getByText(`${laser.name} is now out of service for everyone`).waitFor();
    expect((await testDb()('machines').where({ id: laser.id }).first()).status).toBe('out of service');
    const fault = await testDb()('faults').where({ machine_id: laser.id, summary: 'Smoke from the tube end, coolant alarm' }).first();
    expect(fault.reported_by).toBe(member.id);
    expect(fault.photos).toHaveLength(1);
    expect(errors).toEqual([]);
    await phone.close();

    const { ctx: desk, page: sp, errors: deskErrors } = await web.openAs(steward.email, DESK);
    await sp.goto('/faults');
    const card = sp.locator(`[data-fault="${fault.id}"]`);
    await card.waitFor();
    // stop faults come first in the queue
    expect(await sp.locator('[data-fault]').first().getAttribute('data-severity')).toBe('stop');
    await card.locator('img').first().waitFor();
    // the photo is lazy-loaded: bring it into view and give a busy machine time to load it
    await card.locator('img').first().scrollIntoViewIfNeeded();
    await expect.poll(() => card.locator('img').first().evaluate((img) => (img as HTMLImageElement).naturalWidth), { timeout: 20_000 }).toBeGreaterThan(0);
    await settled(sp);
    await shot(sp, 'faults-queue-desk');

    await card.getByLabel('Resolution (what was done)').fill('Coolant hose reseated, tube inspected, no crack.');
    await card.getByRole('button', { name: 'Resolve', exact: true }).click();
    await sp.getByText('Resolved; the reporter is told.').waitFor();

    const panel = sp.locator(`[data-machine="${laser.code}"]`);
    const back = panel.getByRole('button', { name: 'Back into service' });
    await panel.getByLabel(/Note/).fill('Hose reseated; test job ran clean.');
    expect(await back.isDisabled()).toBe(true); // the checks are not confirmed yet
    for (const box of await panel.getByRole('checkbox').all()) await box.check();
    await back.click();
    await sp.getByText(`${laser.name} is back in service.`).waitFor();
    expect((await testDb()('machines').where({ id: laser.id }).first()).status).toBe('in service');
    expect(await testDb()('audit_log').where({ kind: 'machine.status_changed', subject_id: laser.id }).orderBy('at', 'desc').first()).toMatchObject({ after: { status: 'in service' } });
    expect(deskErrors).toEqual([]);
    await desk.close();
  });
});
