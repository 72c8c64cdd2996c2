/**
 * Journey: a person of each role signs in through the real form and sees the screens of their roles. The people are
 * the file's own, on a domain other than the institution's (which accounts.test.ts turns password sign-in off for,
 * for a moment), so the file runs beside others; it forgets only its own people's sign-in counters.
 */
import { afterAll, beforeAll, describe, it } from 'vitest';
import { DESK, PHONE, SCREENSHOTS, shot, signInThroughForm, hydrated, withBrowser } from '../support/browser';
import { testDb } from '../support/db';
import { newPerson, type TestPerson } from '../support/people';
import type { Role } from '../../src/lib/roles';

const web = withBrowser();
const DOMAIN = 'signin-e2e.example';
const people = {} as Record<'member' | 'instructor' | 'steward' | 'admin' | 'grantee' | 'mistyped', TestPerson>;

beforeAll(async () => {
  for (const role of ['member', 'instructor', 'steward', 'admin'] as const satisfies readonly Role[]) people[role] = await newPerson(`signin-${role}`, { roles: [role], domain: DOMAIN });
  people.grantee = await newPerson('signin-grantee', { domain: DOMAIN });
  people.mistyped = await newPerson('signin-mistyped', { domain: DOMAIN }); // a wrong password of its own
});
afterAll(async () => {
  // the counters of this file's people only; the one point the wrong password put on the browser's address stays
  // (30 failures in 15 minutes close an address; nothing counts up to that from the browser's address)
  for (const { email } of Object.values(people)) {
    await testDb()('sign_in_limits').whereIn('key', [`email:${email}`, `email-wait:${email}`]).orWhere('key', 'like', `pair:${email}|%`).delete();
  }
});

const cases = [
  { who: 'member', sees: ['Floor'], notSees: ['People'] },
  { who: 'instructor', sees: ['Floor'], notSees: ['People'] },
  { who: 'steward', sees: ['Floor'], notSees: ['People'] },
  { who: 'admin', sees: ['Floor', 'People'], notSees: [] },
] as const;

// the checks share nothing (each its own context and person): they run side by side
describe.concurrent('signing in as each role', () => {
  for (const c of cases) {
    it(`${c.who}: the Floor lists the lasers and the navigation shows the screens of the role`, async ({ expect }) => {
      const { ctx, page, errors } = await web.openAs(null);
      await signInThroughForm(page, people[c.who].email, people[c.who].password);
      expect(new URL(page.url()).pathname).toBe('/');
      const nav = page.getByRole('navigation', { name: 'Main' });
      for (const label of c.sees) await expect(nav.getByRole('link', { name: label, exact: true }).count()).resolves.toBe(1);
      for (const label of c.notSees) await expect(nav.getByRole('link', { name: label, exact: true }).count()).resolves.toBe(0);
      await expect(page.locator('header').innerText()).resolves.toContain(people[c.who].name);
      const main = await page.locator('main').innerText();
      for (const m of ['Laser A', 'Laser B', 'Laser C']) expect(main).toContain(m);
      expect(main).toMatch(/60\s*W/);
      expect(errors).toEqual([]);
      await ctx.close();
    });
  }

  it('a member opening the People screen gets the 403 page', async ({ expect }) => {
    const { ctx, page } = await web.openAs(people.member.email);
    const res = await page.goto('/admin/people');
    expect(res?.status()).toBe(403);
    await expect(page.getByRole('heading', { level: 1 }).innerText()).resolves.toContain('not for your role');
    await ctx.close();
  });

  it('a wrong password shows a clear message and stays on the sign-in page', async ({ expect }) => {
    const { ctx, page } = await web.openAs(null);
    await signInThroughForm(page, people.mistyped.email, 'not the password');
    expect(new URL(page.url()).pathname).toBe('/signin');
    await expect(page.getByRole('alert').innerText()).resolves.toContain('do not match an active account');
    await ctx.close();
  });

  it('signed out, a deep link leads to sign-in and back to the same page afterwards', async ({ expect }) => {
    const { ctx, page } = await web.openAs(null);
    await page.goto('/admin/people?q=ste');
    await hydrated(page);
    expect(new URL(page.url()).pathname).toBe('/signin');
    await signInThroughForm(page, people.admin.email, people.admin.password);
    const url = new URL(page.url());
    expect(url.pathname + url.search).toBe('/admin/people?q=ste');
    await ctx.close();
  });

  it('the admin finds a person on the People screen and grants a role, at desk and phone widths', async ({ expect }) => {
    const { email, name } = people.grantee;
    for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
      const { ctx, page, errors } = await web.openAs(people.admin.email, viewport);
      if (SCREENSHOTS) {
        await page.goto('/');
        await shot(page, `floor-${label}`);
      }
      await page.goto('/admin/people');
      await hydrated(page);
      await page.getByRole('searchbox').fill(email);
      const row = page.getByRole('row').filter({ hasText: email });
      await row.waitFor();
      // the search is applied as the admin types (debounced): the table narrows to the one match
      await expect.poll(() => page.getByRole('row').count(), { timeout: 20_000 }).toBe(2); // header + one person
      await shot(page, `people-${label}`);
      if (label === 'desk') {
        const steward = row.getByRole('checkbox', { name: 'Steward' });
        // the box changes once the server has saved the change
        await steward.click();
        await page.getByText(`${name}: granted Steward.`).waitFor();
        expect(await steward.isChecked()).toBe(true);
        await steward.click();
        await page.getByText(`${name}: removed Steward.`).waitFor();
        expect(await steward.isChecked()).toBe(false);
      }
      expect(errors).toEqual([]);
      await ctx.close();
    }
  });

  it('the sign-in page at phone width', async () => {
    const { ctx, page } = await web.openAs(null, PHONE);
    await page.goto('/signin');
    await hydrated(page);
    await shot(page, 'signin-phone');
    await page.setViewportSize(DESK);
    await shot(page, 'signin-desk');
    await ctx.close();
  });
});
