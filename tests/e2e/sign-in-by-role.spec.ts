/** Journey: each demo person signs in through the real form and sees the screens of their roles. */
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, launch, newContext, shot, signIn, signInThroughForm, watchErrors, hydrated } from '../support/browser';
import { clearSignInLimits, closeTestDb } from '../support/db';

let browser: Browser;
beforeAll(async () => {
  browser = await launch();
});
afterAll(async () => {
  await browser?.close();
  await clearSignInLimits();
  await closeTestDb();
});

const cases = [
  { who: 'member', name: 'Mere Walker', sees: ['Floor'], notSees: ['People'] },
  { who: 'instructor', name: 'Ivan Petrovic', sees: ['Floor'], notSees: ['People'] },
  { who: 'steward', name: 'Sione Taufa', sees: ['Floor'], notSees: ['People'] },
  { who: 'admin', name: 'Aroha Ngata', sees: ['Floor', 'People'], notSees: [] },
] as const;

describe('signing in as each role', () => {
  for (const c of cases) {
    it(`${c.who}: the Floor lists the lasers and the navigation shows the screens of the role`, async () => {
      const ctx = await newContext(browser);
      const page = await ctx.newPage();
      const errors = watchErrors(page);
      await signInThroughForm(page, c.who);
      expect(new URL(page.url()).pathname).toBe('/');
      const nav = page.getByRole('navigation', { name: 'Main' });
      for (const label of c.sees) await expect(nav.getByRole('link', { name: label, exact: true }).count()).resolves.toBe(1);
      for (const label of c.notSees) await expect(nav.getByRole('link', { name: label, exact: true }).count()).resolves.toBe(0);
      await expect(page.locator('header').innerText()).resolves.toContain(c.name);
      const main = await page.locator('main').innerText();
      for (const m of ['Laser A', 'Laser B', 'Laser C']) expect(main).toContain(m);
      expect(main).toMatch(/60\s*W/);
      expect(errors).toEqual([]);
      await ctx.close();
    });
  }

  it('a member opening the People screen gets the 403 page', async () => {
    const ctx = await newContext(browser);
    const page = await ctx.newPage();
    await signIn(page, 'member');
    const res = await page.goto('/admin/people');
    expect(res?.status()).toBe(403);
    await expect(page.getByRole('heading', { level: 1 }).innerText()).resolves.toContain('not for your role');
    await ctx.close();
  });

  it('a wrong password shows a clear message and stays on the sign-in page', async () => {
    const ctx = await newContext(browser);
    const page = await ctx.newPage();
    await signInThroughForm(page, 'member', 'not the password');
    expect(new URL(page.url()).pathname).toBe('/signin');
    await expect(page.getByRole('alert').innerText()).resolves.toContain('do not match an active account');
    await ctx.close();
  });

  it('signed out, a deep link leads to sign-in and back to the same page afterwards', async () => {
    const ctx = await newContext(browser);
    const page = await ctx.newPage();
    await page.goto('/admin/people?q=ste');
    await hydrated(page);
    expect(new URL(page.url()).pathname).toBe('/signin');
    await signInThroughForm(page, 'admin');
    const url = new URL(page.url());
    expect(url.pathname + url.search).toBe('/admin/people?q=ste');
    await ctx.close();
  });

  it('the admin finds a person on the People screen and grants a role, at desk and phone widths', async () => {
    for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
      const ctx = await newContext(browser, viewport);
      const page = await ctx.newPage();
      const errors = watchErrors(page);
      await signIn(page, 'admin');
      await shot(page, `floor-${label}`);
      await page.goto('/admin/people');
      await hydrated(page);
      await page.getByRole('searchbox').fill('newbie@tidewater');
      const row = page.getByRole('row').filter({ hasText: 'newbie@tidewater.example' });
      await row.waitFor();
      // the search is applied as the admin types (debounced): the table narrows to the one match
      await expect.poll(() => page.getByRole('row').count(), { timeout: 20_000 }).toBe(2); // header + one person
      await shot(page, `people-${label}`);
      if (label === 'desk') {
        const steward = row.getByRole('checkbox', { name: 'Steward' });
        // the box changes once the server has saved the change
        await steward.click();
        await page.getByText('Noah Bennett: granted Steward.').waitFor();
        expect(await steward.isChecked()).toBe(true);
        await steward.click();
        await page.getByText('Noah Bennett: removed Steward.').waitFor();
        expect(await steward.isChecked()).toBe(false);
      }
      expect(errors).toEqual([]);
      await ctx.close();
    }
  });

  it('the sign-in page at phone width', async () => {
    const ctx = await newContext(browser, PHONE);
    const page = await ctx.newPage();
    await page.goto('/signin');
    await hydrated(page);
    await shot(page, 'signin-phone');
    await page.setViewportSize(DESK);
    await shot(page, 'signin-desk');
    await ctx.close();
  });
});
