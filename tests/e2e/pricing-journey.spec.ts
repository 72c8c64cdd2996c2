/**
 * Journey: an admin schedules a price version with a future effective date, and a quote for now keeps the old rate.
 * Screenshots of Pricing at phone and desk width. Serial: the scheduled version is part of every later quote's
 * history (the member's card and receipt are account-journey.spec.ts).
 */
import { describe, expect, it } from 'vitest';
import { PHONE, shot, signIn, settled, withBrowser } from '../support/browser';
import { testDb } from '../support/db';

const web = withBrowser();

describe('pricing', () => {
  it('the admin schedules a new price version; a quote for now keeps the old rate', async () => {
    const { ctx, page, errors } = await web.openAs(null);
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

    const { ctx: phone, page: p2 } = await web.openAs('admin', PHONE);
    await p2.goto('/admin/pricing');
    await settled(p2);
    await shot(p2, 'pricing-phone');
    await phone.close();
  });
});
