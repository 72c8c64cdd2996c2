/**
 * Journey: the admin grants a role and finds it in the audit log (filters, CSV), and deactivates a person who then
 * cannot sign in. Runs beside other files: the people are its own (signed up through the form from addresses of
 * their own), the audit is filtered down to its own change, and it forgets only its own person's sign-in counters
 * (the one failure the refused sign-in puts on the browser's address stays: 30 in 15 minutes close an address).
 * Renaming the site is admin-console.spec.ts (serial: every file sees the site's name).
 */
import Papa from 'papaparse';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PHONE, shot, signInThroughForm, hydrated, downloadedText, withBrowser } from '../support/browser';
import { Client, body, freshLoopbackAddress } from '../support/client';
import { confirmByDatabase } from '../support/people';
import { testDb } from '../support/db';
import { nextDate, zonedDate } from '../../src/lib/time';

const web = withBrowser();
let admin: Client;
const mine: string[] = [];

/** A new member through the real sign-up form (the API client, not the browser, to save time). */
async function newMember(name: string): Promise<{ email: string; password: string }> {
  const c = new Client(undefined, freshLoopbackAddress());
  await c.get('/signup');
  const email = `e2e-${Date.now()}-${Math.floor(Math.random() * 1e6)}@example.org`;
  const password = 'a long enough phrase';
  const res = await c.fetch('/signup', { method: 'POST', body: new URLSearchParams({ name, email, password }), headers: { 'content-type': 'application/x-www-form-urlencoded' } });
  expect(res.status).toBe(303);
  await confirmByDatabase(email);
  mine.push(email);
  return { email, password };
}

beforeAll(async () => {
  admin = await Client.as('admin');
});

afterAll(async () => {
  for (const email of mine) {
    await testDb()('sign_in_limits').whereIn('key', [`email:${email}`, `email-wait:${email}`]).orWhere('key', 'like', `pair:${email}|%`).delete();
  }
});

async function findPerson(page: Page, text: string) {
  await page.goto('/admin/people');
  await hydrated(page);
  await page.getByText(/^\d+ (person|people)$/).waitFor(); // the island has loaded (and hydrated)
  await page.getByRole('searchbox').fill(text);
  const row = page.getByRole('row').filter({ hasText: text });
  await row.waitFor();
  await expect.poll(() => page.getByRole('row').count(), { timeout: 5000 }).toBe(2);
  return row;
}

describe('the admin console: people and the audit log', () => {
  it('the admin grants a role, then finds exactly that change in the audit log and downloads it as CSV', async () => {
    const name = `Wiremu Audit ${Date.now() % 100000}`;
    await newMember(name);
    const { ctx, page, errors } = await web.openAs('admin');

    // the dashboard leads to every admin screen
    await page.goto('/admin');
    await hydrated(page);
    for (const label of ['People', 'Site', 'Audit']) {
      await expect(page.getByRole('list', { name: 'Admin screens' }).getByRole('link', { name: new RegExp(`^${label}`) }).count()).resolves.toBe(1);
    }
    await shot(page, 'admin-desk');

    const row = await findPerson(page, name);
    await row.getByRole('checkbox', { name: 'Steward' }).click();
    await page.getByText(`${name}: granted Steward.`).waitFor();

    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Audit', exact: true }).click();
    await page.waitForURL('**/admin/audit');
    await page.getByRole('heading', { name: 'Audit' }).waitFor();
    await page.getByLabel('Kind').selectOption('role.changed');
    await page.getByLabel('Person who acted').selectOption({ label: 'Aroha Ngata (admin@tidewater.example)' });
    await page.getByLabel('Search').fill(name);
    const entry = page.getByRole('row').filter({ hasText: `Roles of ${name}: +steward` });
    await entry.waitFor();
    await expect.poll(() => page.getByRole('row').count(), { timeout: 5000 }).toBe(2); // header + the one change
    await expect(page.getByText('1 entry').count()).resolves.toBe(1);

    // dates are days in the site's time zone: today there includes it, up to yesterday does not
    const today = zonedDate(new Date(), (await body(await admin.get('/api/site'))).timeZone);
    await page.getByLabel('From (day)').fill(today);
    await page.getByLabel('To (day, included)').fill(today);
    await entry.waitFor();
    await shot(page, 'audit-desk');
    await page.getByLabel('From (day)').fill('2026-01-01');
    await page.getByLabel('To (day, included)').fill(previousDay(today));
    await page.getByText('Nothing in the log matches these filters.').waitFor();
    await page.getByLabel('To (day, included)').fill(today);
    await entry.waitFor();

    // the details show before and after
    await entry.getByRole('button', { name: 'Details' }).click();
    await expect(entry.innerText()).resolves.toMatch(/steward/);
    // plain words on the screen; the event code stays in the API and the CSV (below)
    await expect(entry.innerText()).resolves.toContain('Roles changed');
    await expect(entry.innerText()).resolves.not.toContain('role.changed');

    const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Download CSV' }).click()]);
    expect(download.suggestedFilename()).toMatch(/^beamwarden-audit-\d{4}-\d{2}-\d{2}\.csv$/);
    const csv = await downloadedText(download);
    const parsed = Papa.parse<Record<string, string>>(csv, { header: true, skipEmptyLines: true });
    expect(parsed.errors).toEqual([]);
    expect(parsed.data).toHaveLength(1);
    expect(parsed.data[0]).toMatchObject({ actor: 'Aroha Ngata', kind: 'role.changed', summary: `Roles of ${name}: +steward` });
    expect(errors).toEqual([]);
    await ctx.close();

    const { ctx: phone, page: p2 } = await web.openAs('admin', PHONE);
    await p2.goto('/admin/audit');
    await p2.getByRole('row').nth(1).waitFor();
    await shot(p2, 'audit-phone');
    await phone.close();
  });

  it('the admin deactivates a person, who then cannot sign in', async () => {
    const name = `Hana Leaving ${Date.now() % 100000}`;
    const person = await newMember(name);

    const { ctx, page, errors } = await web.openAs('admin');
    const row = await findPerson(page, name);
    page.once('dialog', (d) => void d.accept());
    await row.getByRole('button', { name: `Deactivate ${name}` }).click();
    await page.getByText(`${name}: deactivated.`).waitFor();
    await expect(row.getByText('Deactivated', { exact: true }).count()).resolves.toBe(1);
    await expect(row.getByRole('button', { name: `Reactivate ${name}` }).count()).resolves.toBe(1);
    // the admin's own row offers no Deactivate button
    await page.getByRole('searchbox').fill('admin@tidewater.example');
    const self = page.getByRole('row').filter({ hasText: 'admin@tidewater.example' });
    await self.waitFor();
    await expect(self.getByRole('button', { name: /Deactivate/ }).count()).resolves.toBe(0);
    expect(errors).toEqual([]);
    await ctx.close();

    const { ctx: theirs, page: p2 } = await web.openAs(null, PHONE);
    await signInThroughForm(p2, person.email, person.password);
    expect(new URL(p2.url()).pathname).toBe('/signin');
    await expect(p2.getByRole('alert').innerText()).resolves.toContain('do not match an active account');
    await theirs.close();
  });
});

function previousDay(date: string): string {
  const d = new Date(`${date}T00:00:00Z`);
  d.setUTCDate(d.getUTCDate() - 1);
  const prev = d.toISOString().slice(0, 10);
  expect(nextDate(prev)).toBe(date);
  return prev;
}
