/**
 * Journey: a member saves the test card on Account and sees it (brand, last four), then a receipt with its
 * breakdown; an admin schedules a price version with a future effective date, and a quote for now keeps the
 * old rate. Screenshots of Account and Pricing at phone and desk width.
 */
import { randomUUID } from 'node:crypto';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, launch, newContext, shot, signIn, watchErrors, settled } from '../support/browser';
import { closeTestDb, testDb } from '../support/db';
import { chargeBeamTime } from '../../src/lib/server/payments/billing';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';

let browser: Browser;
beforeAll(async () => {
  browser = await launch();
});
afterAll(async () => {
  await browser?.close();
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

describe('account and pricing', () => {
  it('the member saves the always-approved practice card, sees Visa •••• 4242, and reads a receipt with the breakdown', async () => {
    const ctx = await newContext(browser, DESK);
    const page = await ctx.newPage();
    const errors = watchErrors(page);
    await signIn(page, 'member');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Account', exact: true }).click();
    await settled(page);
    expect(await page.getByRole('heading', { level: 1 }).innerText()).toBe('Account');
    // practice payments in plain words: no provider test-token names, no "TEST MODE"
    expect(await page.getByText('Practice payments — no real money moves').count()).toBe(1);
    const main = await page.locator('main').innerText();
    expect(main).not.toMatch(/tok_|TEST MODE/);
    await page.getByLabel(/Always approved/).check();
    await page.getByRole('button', { name: 'Save practice card' }).click();
    await page.getByText('Card saved: Visa ending 4242').waitFor();
    expect(await page.getByTestId('card').innerText()).toBe('Visa •••• 4242');
    expect(await page.getByTestId('tier').innerText()).toBe('Community');

    // a check-out (issue 6 will call this) charges the saved card
    const member = await testDb()('people').where({ email: 'member@tidewater.example' }).first('id');
    const laserB = await testDb()('machines').where({ code: 'laser-b' }).first('id');
    const charge = await chargeBeamTime({ personId: member.id, machineId: laserB.id, sessionId: randomUUID(), startedAt: new Date(), minutes: 18, materials: [{ sku: 'mdf-3', quantity: 1 }] });
    expect(charge.state).toBe('captured');
    await page.reload();
    await settled(page);
    // newest first: the charge this journey just made (other files may have charged member@ on Laser B too)
    const row = page.locator('tbody tr', { hasText: 'Laser B' }).first();
    // 18 → 20 min × NZD 0.75 + one MDF sheet 4.00 = 19.00 (seeded prices)
    expect(await row.innerText()).toContain('$19.00'); // NZD written the en-NZ way
    expect(await row.innerText()).toContain('captured');
    await shot(page, 'account-desk');
    await row.getByRole('link', { name: 'Receipt' }).click();
    await settled(page);
    const receipt = await page.locator('article').innerText();
    expect(receipt).toContain('Laser B: 20 min');
    expect(receipt).toContain('3 mm MDF');
    expect(receipt).toMatch(/Tax included \(15%\)\s+\$2\.48/); // 1900 × 15/115 = 247.8 → 248 (NZ GST 15 %: statutory rate, Goods and Services Tax Act 1985 s 8, from memory)
    expect(receipt).toContain('Paid by card: $19.00');
    await shot(page, 'receipt-desk');
    expect(errors).toEqual([]);
    await ctx.close();

    const phone = await newContext(browser, PHONE);
    const p2 = await phone.newPage();
    await signIn(p2, 'member');
    await p2.goto('/account');
    await settled(p2);
    expect(await p2.getByTestId('card').innerText()).toBe('Visa •••• 4242');
    const overflow = await p2.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
    expect(overflow).toBeLessThanOrEqual(0);
    await shot(p2, 'account-phone');
    await phone.close();
  });

  it('the admin schedules a new price version; a quote for now keeps the old rate', async () => {
    const ctx = await newContext(browser, DESK);
    const page = await ctx.newPage();
    const errors = watchErrors(page);
    await signIn(page, 'admin');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Pricing', exact: true }).click();
    await settled(page);
    const future = new Date(Date.now() + 90 * 86_400_000).toISOString().slice(0, 10);
    await page.getByLabel(/Effective from/).fill(future);
    await page.getByLabel('Laser A, Community rate per minute').fill('2.00');
    await page.getByLabel(/Note for the history/).fill('New tube on Laser A');
    await page.getByRole('button', { name: 'Save as new version' }).click();
    await page.getByText(/Saved: the new prices apply from/).waitFor();
    const scheduled = page.locator('li', { hasText: 'New tube on Laser A' });
    expect(await scheduled.innerText()).toContain('Scheduled');

    const laserA = await testDb()('machines').where({ code: 'laser-a' }).first('id');
    const now = await page.request.post('/api/tools/quote', { data: { machineId: laserA.id, tier: 'community', minutes: 10 } });
    expect(now.status()).toBe(200);
    expect((await now.json()).amountMinor).toBe(900); // the seeded rate NZD 0.90/min still in force
    const at = new Date(Date.parse(`${future}T12:00:00Z`)).toISOString();
    const later = await page.request.post('/api/tools/quote', { data: { machineId: laserA.id, tier: 'community', minutes: 10, at } });
    expect((await later.json()).amountMinor).toBe(2000);
    await shot(page, 'pricing-desk');
    expect(errors).toEqual([]);
    await ctx.close();

    const phone = await newContext(browser, PHONE);
    const p2 = await phone.newPage();
    await signIn(p2, 'admin');
    await p2.goto('/admin/pricing');
    await settled(p2);
    await shot(p2, 'pricing-phone');
    await phone.close();
  });
});
