/**
 * Journey: a member (of the file's own, on the Community tier like the demo member) saves the test card on Account
 * and sees it (brand, last four), then a receipt with its breakdown. Screenshots of Account at phone and desk width.
 * Scheduling a price version is pricing-journey.spec.ts (it changes what every file's quotes read later on).
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PHONE, shot, signIn, settled, withBrowser } from '../support/browser';
import { testDb } from '../support/db';
import { newPerson, type TestPerson } from '../support/people';
import { chargeBeamTime } from '../../src/lib/server/payments/billing';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';

const web = withBrowser();
let member: TestPerson;
beforeAll(async () => {
  member = await newPerson('account', { tier: 'community' });
});
afterAll(async () => {
  await stopJobs();
  await closeDb();
});

describe('account', () => {
  it('the member saves the always-approved practice card, sees Visa •••• 4242, and reads a receipt with the breakdown', async () => {
    const { ctx, page, errors } = await web.openAs(null);
    await signIn(page, member.email);
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
    const laserB = await testDb()('machines').where({ code: 'laser-b' }).first('id');
    const charge = await chargeBeamTime({ personId: member.id, machineId: laserB.id, sessionId: randomUUID(), startedAt: new Date(), minutes: 18, materials: [{ sku: 'mdf-3', quantity: 1 }] });
    expect(charge.state).toBe('captured');
    await page.reload();
    await settled(page);
    // newest first: the charge this journey just made
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

    const { ctx: phone, page: p2 } = await web.openAs(member.email, PHONE);
    await p2.goto('/account');
    await settled(p2);
    expect(await p2.getByTestId('card').innerText()).toBe('Visa •••• 4242');
    const overflow = await p2.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
    expect(overflow).toBeLessThanOrEqual(0);
    await shot(p2, 'account-phone');
    await phone.close();
  });
});
