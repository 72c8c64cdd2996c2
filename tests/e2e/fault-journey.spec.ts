/**
 * Journey: on a phone, a member reports a `stop` fault on Laser C with a photo and sees the machine out of
 * service; at a desk the steward finds it first on the Faults screen, resolves it and puts the machine back
 * into service with the checks confirmed. Screenshots: the fault form (phone) and the Faults queue (desk).
 */
import sharp from 'sharp';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, launch, newContext, shot, signIn, watchErrors, hydrated, settled } from '../support/browser';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';

let browser: Browser;

beforeAll(async () => {
  browser = await launch();
});
afterAll(async () => {
  await testDb()('machines').where({ code: 'laser-c' }).update({ status: 'in service' });
  await browser?.close();
  await clearSignInLimits();
  await closeTestDb();
});

describe('a stop fault from the phone to the steward', () => {
  it('the member reports, the machine stops; the steward sees it and returns the machine to service', async () => {
    const photo = await sharp({ create: { width: 640, height: 480, channels: 3, background: { r: 90, g: 110, b: 130 } } }).jpeg().toBuffer();

    const phone = await newContext(browser, PHONE);
    const page = await phone.newPage();
    const errors = watchErrors(page);
    // signed out: sign in first, then back to the same page
    await page.goto('/m/laser-c/fault');
    await hydrated(page);
    expect(page.url()).toContain('/signin');
    await signIn(page, 'member');
    expect(new URL(page.url()).pathname).toBe('/m/laser-c/fault');
    await page.getByRole('heading', { name: 'Report a fault' }).waitFor();

    await page.getByRole('radio', { name: /Stop/ }).check();
    await page.getByLabel('What happened?').fill('Smoke from the tube end, coolant alarm');
    await page.getByLabel(/More detail/).fill('Stopped the job and pressed the emergency stop. Water on the bed.');
    await page.locator('input[type=file]').setInputFiles({ name: 'tube.jpg', mimeType: 'image/jpeg', buffer: photo });
    await page.getByText('tube.jpg').waitFor();
    await shot(page, 'fault-form-phone');
    await page.getByRole('button', { name: 'Send the report' }).click();
    await page.getByText(/Laser C is now out of service for everyone/).waitFor();
    expect((await testDb()('machines').where({ code: 'laser-c' }).first()).status).toBe('out of service');
    const fault = await testDb()('faults').where({ summary: 'Smoke from the tube end, coolant alarm' }).first();
    expect(fault.photos).toHaveLength(1);
    expect(errors).toEqual([]);
    await phone.close();

    const desk = await newContext(browser, DESK);
    const sp = await desk.newPage();
    const deskErrors = watchErrors(sp);
    await signIn(sp, 'steward');
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

    const panel = sp.locator('[data-machine="laser-c"]');
    const back = panel.getByRole('button', { name: 'Back into service' });
    await panel.getByLabel(/Note/).fill('Hose reseated; test job ran clean.');
    expect(await back.isDisabled()).toBe(true); // the checks are not confirmed yet
    for (const box of await panel.getByRole('checkbox').all()) await box.check();
    await back.click();
    await sp.getByText('Laser C is back in service.').waitFor();
    expect((await testDb()('machines').where({ code: 'laser-c' }).first()).status).toBe('in service');
    expect(await testDb()('audit_log').where({ kind: 'machine.status_changed' }).orderBy('at', 'desc').first()).toMatchObject({ after: { status: 'in service' } });
    expect(deskErrors).toEqual([]);
    await desk.close();
  });
});
