/**
 * Institution sign-in in Chromium: the sign-in page offers "Sign in with <site name>", the local OpenID Connect
 * provider (the fake started by npm test) signs in a demo person, and Beamwarden lands signed in as that person.
 * Also screenshots of the password-reset e-mail and of the account's data export, to be looked at.
 */
import { describe, expect, it } from 'vitest';
import { DESK, PHONE, newContext, shot, watchErrors, settled, withBrowser } from '../support/browser';
import { Client, body, freshLoopbackAddress } from '../support/client';
import { DEMO } from '../support/env';
import { to, waitForMail } from '../support/mail';

const web = withBrowser();

describe('institution sign-in', () => {
  it('signs in through the local identity provider and lands signed in as the matching demo person', async () => {
    const ctx = await newContext(web.browser, DESK);
    // the provider's development pages @import a web font from the internet: refuse it at once (no network here)
    await ctx.route(/fonts\.(googleapis|gstatic)\.com/, (r) => r.abort());
    const page = await ctx.newPage();
    page.setDefaultTimeout(20_000);
    const errors = watchErrors(page);
    await page.goto('/signin');
    const button = page.getByRole('button', { name: 'Sign in with Tidewater Community Workshop' });
    await button.waitFor();
    await shot(page, 'signin-both-ways-desk');
    await button.click();
    // the provider's own sign-in form (development interactions of oidc-provider): the demo address as login
    await page.waitForURL((u) => u.origin === process.env.OIDC_ISSUER, { waitUntil: 'commit' });
    await page.locator('input[name="login"]').waitFor();
    await page.locator('input[name="login"]').fill(DEMO.student);
    await page.locator('input[name="password"]').fill('anything');
    await shot(page, 'institution-provider-login');
    await Promise.all([page.waitForURL((u) => u.origin === new URL(process.env.APP_URL!).origin && !u.pathname.startsWith('/api/auth')), page.locator('button[type="submit"]').first().click()]);
    await settled(page);
    const me = await (await page.request.get('/api/me')).json();
    expect(me, `landed on ${page.url()}`).toMatchObject({ email: DEMO.student, roles: ['member'] });
    await page.goto('/account');
    await expect(page.getByRole('heading', { name: 'Account', exact: true }).isVisible()).resolves.toBe(true);
    expect(errors.filter((e) => !/fonts\.googleapis|ERR_NAME|ERR_INTERNET|ERR_CONNECTION|ERR_FAILED/.test(e))).toEqual([]);
    await ctx.close();

    const { ctx: phone, page: p2 } = await web.openAs(null, PHONE);
    await p2.goto('/signin');
    await shot(p2, 'signin-both-ways-phone');
    await phone.close();
  });

  it('screens to look at: the reset e-mail, the account data section and the export', async () => {
    const email = DEMO.member;
    const c = new Client(undefined, freshLoopbackAddress());
    expect((await c.send('POST', '/api/account/password-reset', { email })).status).toBe(202);
    const mail = await waitForMail((m) => to(email)(m) && /reset your password/.test(m.subject));
    const { ctx, page } = await web.openAs(null);
    await page.setContent(mail.html ?? '');
    await shot(page, 'reset-email');
    expect(await page.getByRole('link', { name: 'Choose a new password' }).getAttribute('href')).toMatch(/\/reset-password\?token=/);
    await page.goto('/forgot-password');
    await shot(page, 'forgot-password');

    const member = await Client.as('member');
    const data = await body(await member.get('/api/account/export'));
    await page.setContent(`<pre style="font:12px monospace;white-space:pre-wrap">${JSON.stringify(data, null, 2).slice(0, 6000).replace(/</g, '&lt;')}</pre>`);
    await shot(page, 'export-json');
    await ctx.close();
  });
});
