/**
 * CHANGES SITE-WIDE SETTINGS: this spec sets the site locale to de-DE through the Site API while it runs and puts
 * the original back in afterAll. Files run one at a time on one shared app and database, so nothing else sees it.
 *
 * Journey: with the site locale de-DE, a browser that itself speaks American English in New York opens Book (member),
 * Account (member) and Reports (admin): dates, times and amounts are written the German way in the site's zone
 * (Pacific/Auckland), never the browser's. Expected shapes are what CLDR (through Intl) writes for de-DE: "3. Dez.
 * 2026", 24-hour clock, "1.234,50 NZ$". Screenshots at desk and phone width.
 */
import type { Browser, BrowserContext } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, hydrated, launch, newContext, shot, watchErrors, settled, signInContext } from '../support/browser';
import { Client, body } from '../support/client';
import { closeTestDb } from '../support/db';

let browser: Browser;
let admin: Client;
let original: Record<string, unknown>;

beforeAll(async () => {
  browser = await launch();
  admin = await Client.as('admin');
  original = await body(await admin.get('/api/site'));
  const { updatedAt: _u, ...rest } = original;
  const res = await admin.send('PUT', '/api/site', { ...rest, locale: 'de-DE' });
  expect(res.status, await res.clone().text()).toBe(200);
});

afterAll(async () => {
  try {
    const { updatedAt: _u, ...rest } = original;
    await admin.send('PUT', '/api/site', rest);
  } finally {
    await browser?.close();
    await closeTestDb();
  }
});

/** A browser whose own locale and zone differ from the site's: islands must not use them. */
function elsewhere(viewport: { width: number; height: number }): Promise<BrowserContext> {
  return newContext(browser, viewport, { locale: 'en-US', timezoneId: 'America/New_York' });
}

const GERMAN_DATE = /\d{1,2}\. (Jan|Feb|März|Apr|Mai|Juni|Juli|Aug|Sep|Okt|Nov|Dez)[a-zä]*\.? \d{4}/;
const nbsp = (s: string) => s.replace(/[\u00a0\u202f]/g, ' ');

describe('the main screens in a second site locale (de-DE)', () => {
  for (const [size, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
    it(`Book, Account and Reports write dates, times and money the German way, in the site's zone (${size})`, async () => {
      const ctx = await elsewhere(viewport);
      const page = await ctx.newPage();
      const errors = watchErrors(page);
      await signInContext(page.context(), 'member');

      await page.goto('/book');
      await page.locator('.fc-timegrid-slot-label').first().waitFor();
      const heading = nbsp(await page.getByRole('heading', { level: 2 }).first().innerText());
      expect(heading).toMatch(GERMAN_DATE);
      expect(heading).toContain('Pacific/Auckland');
      // the grid's hour labels on a 24-hour clock (de), from 07:00 in the site's zone; day headers with German weekdays
      const labels = await page.locator('.fc-timegrid-slot-label-cushion').allInnerTexts();
      expect(labels.filter(Boolean)[0]).toBe('07:00');
      expect(labels.join(' ')).not.toMatch(/AM|PM|am|pm/);
      expect((await page.locator('.fc-col-header-cell').allInnerTexts()).join(' ')).toMatch(/Mo\.|Di\.|Mi\.|Do\.|Fr\.|Sa\.|So\./);
      await shot(page, `site-locale-de-book-${size}`);

      await page.goto('/account');
      await hydrated(page);
      await settled(page);
      const account = nbsp(await page.locator('main').innerText());
      expect(account).not.toMatch(/NZD \d/);
      expect(account).toMatch(/\d,\d{2} NZ\$/); // the balance owed and the charges: "0,00 NZ$"
      await shot(page, `site-locale-de-account-${size}`);
      expect(errors).toEqual([]);
      await ctx.close();

      const actx = await elsewhere(viewport);
      const apage = await actx.newPage();
      const aerrors = watchErrors(apage);
      await signInContext(apage.context(), 'admin');
      await apage.goto('/reports');
      await apage.getByTestId('revenue-net').waitFor();
      const reports = nbsp(await apage.locator('main').innerText());
      expect(reports).toMatch(new RegExp(`Showing ${GERMAN_DATE.source} to ${GERMAN_DATE.source}`));
      expect(nbsp(await apage.getByTestId('revenue-net').innerText())).toMatch(/^-?[\d.]+,\d{2} NZ\$$/);
      expect(nbsp(await apage.getByTestId('util-totals').innerText())).not.toMatch(/\d\.\d h|\d\.\d %/); // "12,5 h", "40,2 %": decimal commas
      await settled(apage);
      await shot(apage, `site-locale-de-reports-${size}`);
      expect(aerrors).toEqual([]);
      await actx.close();
    });
  }
});
