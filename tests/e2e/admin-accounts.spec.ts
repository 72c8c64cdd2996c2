/**
 * Journey: the admin invites a person from People (the invitation e-mail arrives with its link) and sets up
 * institution sign-in on Site (the sign-in page then offers "Sign in with <name>"). Both screens are checked with
 * axe-core at desk and phone widths. The institution settings are put back afterwards for the other files.
 */
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, hydrated, launch, newContext, shot, watchErrors, signInContext } from '../support/browser';
import { checkBothWidths } from '../support/axe';
import { Client, body } from '../support/client';
import { clearSignInLimits, closeTestDb } from '../support/db';
import { to, waitForMail } from '../support/mail';


let browser: Browser;
let admin: Client;
let original: { institutionName: string | null; tierClaim: string | null; tierMap: Record<string, string>; passwordSignInOff: boolean } | null = null;

beforeAll(async () => {
  browser = await launch();
  admin = await Client.as('admin');
  const o = await body(await admin.get('/api/institution-sign-in'));
  original = { institutionName: o.institutionName, tierClaim: o.tierClaim, tierMap: o.tierMap, passwordSignInOff: o.passwordSignInOff };
});

afterAll(async () => {
  if (original) await admin.send('PUT', '/api/institution-sign-in', original);
  await browser?.close();
  await clearSignInLimits();
  await closeTestDb();
});

/** Page errors, less the browser's own log line for the refusals this test provokes on purpose (409, 422). */
const unexpected = (errors: string[]) => errors.filter((e) => !/Failed to load resource: the server responded with a status of (409|422)/.test(e));

describe('admin: accounts', () => {
  it('the admin invites a person from People; the invitation e-mail arrives with a link to choose a password', async () => {
    const stamp = `${Date.now() % 1_000_000}-${Math.floor(Math.random() * 1000)}`;
    const email = `invitee-${stamp}@example.org`;
    const name = `Mereana Invitee ${stamp}`;
    const ctx = await newContext(browser, DESK);
    const page = await ctx.newPage();
    page.setDefaultTimeout(20_000);
    const errors = watchErrors(page);
    await signInContext(page.context(), 'admin');
    await page.goto('/admin/people');
    await hydrated(page);
    await page.locator('table').waitFor();
    const form = page.getByRole('region', { name: 'Invite a person' });
    const answer = page.getByTestId('invite-answer');

    // empty fields: an error under each, and the answer beside the button takes the focus
    await form.getByRole('button', { name: 'Send invitation' }).click();
    await expect.poll(() => answer.textContent()).toMatch(/correct the fields/);
    expect(await form.getByLabel('Name', { exact: true }).getAttribute('aria-invalid')).toBe('true');
    expect(await form.getByLabel('E-mail', { exact: true }).getAttribute('aria-invalid')).toBe('true');
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))).toBe('invite-answer');

    await form.getByLabel('Name', { exact: true }).fill(name);
    await form.getByLabel('E-mail', { exact: true }).fill(email);
    await form.getByRole('checkbox', { name: 'Instructor' }).check();
    await form.getByLabel('Pricing tier').selectOption('student');
    await form.getByRole('button', { name: 'Send invitation' }).click();
    await expect.poll(() => answer.textContent()).toContain(`Invitation sent to ${name} <${email}>`);
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))).toBe('invite-answer');
    expect(await form.getByLabel('Name', { exact: true }).inputValue()).toBe(''); // ready for the next person
    await shot(page, 'admin-people-invited-desk');

    // the person exists with the chosen roles and tier, and has not confirmed yet (no password of their own)
    const list = await body(await admin.get(`/api/people?q=${encodeURIComponent(email)}`));
    expect(list.rows).toHaveLength(1);
    expect(list.rows[0]).toMatchObject({ email, name, roles: ['member', 'instructor'], tier: 'student', active: true });

    // the invitation e-mail, with a single link that opens the choose-a-password page
    const mail = await waitForMail((m) => to(email)(m) && /invited/i.test(m.subject));
    const link = /href="([^"]*\/reset-password\?token=[^"]+)"/.exec(mail.html ?? '')?.[1];
    expect(link, mail.html).toBeTruthy();
    const visitor = await newContext(browser, DESK);
    const vp = await visitor.newPage();
    const res = await vp.goto(new URL(link!.replace(/&amp;/g, '&')).pathname + new URL(link!.replace(/&amp;/g, '&')).search);
    expect(res?.status()).toBe(200);
    await visitor.close();

    // the same address again: the error sits at the e-mail field
    await form.getByLabel('Name', { exact: true }).fill(name);
    await form.getByLabel('E-mail', { exact: true }).fill(email);
    await form.getByRole('button', { name: 'Send invitation' }).click();
    await expect.poll(() => answer.textContent()).toMatch(/already has an account/);
    expect(await form.getByLabel('E-mail', { exact: true }).getAttribute('aria-invalid')).toBe('true');

    // the list below shows that person at once (the search holds the address): until they choose a password it
    // says so, and a new invitation can be sent from their row
    await expect.poll(() => page.getByLabel('Search by name or e-mail').inputValue()).toBe(email);
    await expect.poll(() => answer.textContent()).toMatch(/shown in the list below/);
    const row = page.locator(`tr[data-person="${email}"]`);
    await row.getByTestId('awaiting-invitation').waitFor();
    expect(await row.getByTestId('awaiting-invitation').innerText()).toContain('Invited, no password yet');
    await row.getByRole('button', { name: `Send a new invitation to ${name}` }).click();
    await page.getByText(`A new invitation went to ${name} <${email}>`).waitFor();
    // the invite form starts clean again: its earlier refusal is not left beside the new answer
    await expect.poll(() => form.getByLabel('E-mail', { exact: true }).inputValue()).toBe('');
    expect(await page.getByText(/already has an account/).count()).toBe(0);
    const again = await waitForMail((m) => to(email)(m) && /new invitation/i.test(m.subject));
    expect(again.text).toContain('no longer works');
    await shot(page, 'admin-people-reinvited-desk');

    const problems = await checkBothWidths(page, 'admin-people');
    const all = [...problems, ...unexpected(errors)];
    expect(all, all.join('\n')).toEqual([]);
    await ctx.close();
  });

  it('the admin names the institution on Site; the sign-in page then offers "Sign in with <name>"', async () => {
    const institution = `Harbourside Polytechnic ${Date.now() % 100000}`;
    const ctx = await newContext(browser, DESK);
    const page = await ctx.newPage();
    page.setDefaultTimeout(20_000);
    const errors = watchErrors(page);
    await signInContext(page.context(), 'admin');
    await page.goto('/admin/site');
    await hydrated(page);
    const env = page.getByTestId('institution-environment');
    // npm test runs the local identity provider, so the environment part says it is configured (secret not shown)
    await expect(env.textContent()).resolves.toContain('Configured');
    await expect(env.textContent()).resolves.toContain(process.env.OIDC_ISSUER ?? 'issuer missing');
    await expect(env.textContent()).resolves.not.toContain('beamwarden-local-secret');

    const answer = page.getByTestId('institution-answer');
    const save = page.getByRole('button', { name: 'Save institution sign-in' });
    await page.getByLabel('Institution name on the sign-in button').fill(institution);
    // a claim name the server refuses: the message sits at that field
    await page.getByLabel('Claim that decides the pricing tier').fill('has spaces');
    await save.click();
    await expect.poll(() => answer.textContent()).toMatch(/not valid/);
    expect(await page.getByLabel('Claim that decides the pricing tier').getAttribute('aria-invalid')).toBe('true');
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))).toBe('institution-answer');

    await page.getByLabel('Claim that decides the pricing tier').fill('affiliation');
    await page.getByRole('button', { name: 'Add a value' }).click();
    await page.getByLabel('Value 1', { exact: true }).fill('student');
    await page.getByLabel('Tier for value 1').selectOption('student');
    await page.getByRole('button', { name: 'Add a value' }).click();
    await page.getByLabel('Value 2', { exact: true }).fill('staff');
    await page.getByLabel('Tier for value 2').selectOption('staff');
    await save.click();
    await expect.poll(() => answer.textContent()).toContain(`Saved. The sign-in page now offers “Sign in with ${institution}”`);
    expect(await page.getByLabel('Claim that decides the pricing tier').getAttribute('aria-invalid')).toBeNull();
    await shot(page, 'admin-site-institution-saved-desk');

    const saved = await body(await admin.get('/api/institution-sign-in'));
    expect(saved).toMatchObject({ configured: true, institutionName: institution, tierClaim: 'affiliation', tierMap: { student: 'student', staff: 'staff' }, passwordSignInOff: original?.passwordSignInOff });

    const out = await newContext(browser, DESK);
    const op = await out.newPage();
    await op.goto('/signin');
    await op.getByRole('button', { name: `Sign in with ${institution}` }).waitFor();
    await out.close();

    await page.reload();
    await hydrated(page);
    const problems = await checkBothWidths(page, 'admin-site');
    const all = [...problems, ...unexpected(errors)];
    expect(all, all.join('\n')).toEqual([]);
    await ctx.close();
  });
});
