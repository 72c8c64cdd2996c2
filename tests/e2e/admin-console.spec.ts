/**
 * Journey: the admin renames the site from the admin console and sees the new name in the header. Serial: every
 * file sees the site's name (the name is put back afterwards). Granting a role, the audit log and deactivating a
 * person are admin-people.spec.ts, which runs beside other files.
 */
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, launch, newContext, shot, signIn, watchErrors, hydrated, signInContext } from '../support/browser';
import { Client, body } from '../support/client';
import { closeTestDb } from '../support/db';

let browser: Browser;
let admin: Client;
let originalSite: any;

beforeAll(async () => {
  browser = await launch();
  admin = await Client.as('admin');
  originalSite = await body(await admin.get('/api/site'));
});

afterAll(async () => {
  const { updatedAt: _u, ...restore } = originalSite ?? {};
  if (originalSite) await admin.send('PUT', '/api/site', restore);
  await browser?.close();
  await closeTestDb();
});

describe('the admin console', () => {
  it('the admin renames the site and sees the new name in the header', async () => {
    const ctx = await newContext(browser, DESK);
    const page = await ctx.newPage();
    const errors = watchErrors(page);
    await signIn(page, 'admin');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Site', exact: true }).click();
    await page.waitForURL('**/admin/site');
    await hydrated(page); // typing before the islands have hydrated is lost
    await expect(page.getByLabel('Site name').inputValue()).resolves.toBe('Tidewater Community Workshop');
    await page.getByLabel('Site name').fill('Tidewater Laser Room');
    // a bad time zone is refused next to the field, and nothing is saved
    await page.getByLabel('Time zone (IANA)').fill('Pacific/Atlantis');
    await page.getByRole('button', { name: 'Save settings' }).click();
    await page.getByText('Choose an IANA time zone').waitFor();
    expect(errors).toEqual([]);
    await expect(page.locator('header').innerText()).resolves.toContain('Tidewater Community Workshop');
    await page.getByLabel('Time zone (IANA)').fill('Pacific/Auckland');
    await page.getByRole('button', { name: 'Save settings' }).click();
    await page.getByText('Saved. The change is in the audit log.').waitFor();
    await expect(page.locator('header').innerText()).resolves.toContain('Tidewater Laser Room');
    expect(errors).toEqual([]);
    await page.reload();
    await expect(page.locator('header').innerText()).resolves.toContain('Tidewater Laser Room');
    await shot(page, 'site-desk');
    await page.goto('/');
    await hydrated(page);
    await expect(page.locator('header').innerText()).resolves.toContain('Tidewater Laser Room');
    expect(errors).toEqual([]);
    await ctx.close();

    const phone = await newContext(browser, PHONE);
    const p2 = await phone.newPage();
    await signInContext(p2.context(), 'admin');
    await p2.goto('/admin/site');
    await p2.getByLabel('Site name').waitFor();
    await shot(p2, 'site-phone');
    await phone.close();
  });
});

