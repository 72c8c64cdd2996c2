/**
 * The machine's QR page and the way back into service, as people meet them, on a machine this file creates:
 * signed out the page shows the machine, its status, today's bookings without names, the hazards and the
 * emergency steps, and "Sign in to check in or report a fault" comes back to it; on a phone the main actions
 * come first and the navigation folds into a menu worked by keyboard; a steward's "Back into service" with a
 * stop fault open is refused and the panel says why, and "Resolve and return to service" does both; axe finds
 * no serious or critical issue on these screens at desk and phone widths.
 */
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, shot, signIn, hydrated, withBrowser } from '../support/browser';
import { checkBothWidths } from '../support/axe';
import { Client, body } from '../support/client';
import { testDb } from '../support/db';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';


const web = withBrowser();
let admin: Client;
let machine: TestMachine;

beforeAll(async () => {
  admin = await Client.as('admin');
  machine = await createTestMachine(admin, 'qrpage');
});
afterAll(async () => {
  await retireTestMachine(admin, machine);
});

describe('the QR page signed out', () => {
  it('shows the machine, its status, today and the hazards; signing in from it comes back to it', async () => {
    const { ctx, page, errors } = await web.openAs(null, PHONE);
    await page.goto(`/m/${machine.code}`);
    expect(new URL(page.url()).pathname).toBe(`/m/${machine.code}`);
    expect(await page.getByRole('heading', { level: 1 }).innerText()).toBe(machine.name);
    expect(await page.locator('[data-status-pill]').innerText()).toContain('In service');
    await page.getByRole('heading', { name: 'Booked today' }).waitFor();
    await page.getByRole('heading', { name: 'Hazards in short' }).waitFor();
    await page.getByRole('heading', { name: /Fire, smoke that does not clear/ }).waitFor();
    const problems: string[] = [];
    problems.push(...(await checkBothWidths(page, 'qr-signed-out')));
    await page.setViewportSize(PHONE);
    const signInLink = page.getByRole('link', { name: 'Sign in to check in or report a fault' });
    // the way to act is on the first screen of a phone
    expect((await signInLink.boundingBox())!.y + 40).toBeLessThan(PHONE.height);
    await signInLink.click();
    await page.waitForURL('**/signin**');
    await signIn(page, 'member');
    expect(new URL(page.url()).pathname).toBe(`/m/${machine.code}`);
    const report = page.getByRole('link', { name: 'Report a fault' });
    expect((await report.boundingBox())!.y + 40).toBeLessThan(PHONE.height); // above the fold on a phone
    problems.push(...(await checkBothWidths(page, 'qr-signed-in')));
    await page.goto(`/m/${machine.code}/fault`);
    problems.push(...(await checkBothWidths(page, 'qr-fault-form')));
    expect(problems, problems.join('\n')).toEqual([]);
    expect(errors).toEqual([]);
    await ctx.close();
  }, 90_000);
});

describe('the navigation on a phone', () => {
  it('folds into a menu that opens and closes by keyboard', async () => {
    const { ctx, page } = await web.openAs('member', PHONE);
    await page.goto(`/m/${machine.code}`);
    const button = page.getByRole('button', { name: 'Menu' });
    const nav = page.getByRole('navigation', { name: 'Main' });
    expect(await button.isVisible()).toBe(true);
    expect(await nav.isVisible()).toBe(false);
    expect(await button.getAttribute('aria-expanded')).toBe('false');
    await button.focus();
    await page.keyboard.press('Enter');
    await nav.waitFor({ state: 'visible' });
    expect(await button.getAttribute('aria-expanded')).toBe('true');
    await shot(page, 'phone-menu-open');
    await page.keyboard.press('Tab');
    expect(await page.evaluate(() => document.activeElement?.closest('#site-menu') !== null)).toBe(true);
    await page.keyboard.press('Escape');
    await nav.waitFor({ state: 'hidden' });
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-menu-button'))).toBe('');
    await page.keyboard.press('Space');
    await nav.waitFor({ state: 'visible' });
    await page.keyboard.press('Space');
    await nav.waitFor({ state: 'hidden' });
    // at desk width the navigation is always shown and there is no menu button
    await page.setViewportSize(DESK);
    expect(await nav.isVisible()).toBe(true);
    expect(await button.isVisible()).toBe(false);
    await ctx.close();
  });
});

describe('back into service while a stop fault is open', () => {
  it('is refused and the panel says why; "Resolve and return to service" does both', async () => {
    const member = await Client.as('member');
    const summary = `Cracked lens ${Date.now().toString(36)}`;
    const form = new FormData();
    form.set('summary', summary);
    form.set('severity', 'stop');
    const filed = await member.fetch(`/api/machines/${machine.code}/faults`, { method: 'POST', body: form });
    expect(filed.status, await filed.clone().text()).toBe(201);
    const faultId = (await body(filed)).fault.id as string;

    const { ctx, page, errors } = await web.openAs('steward');
    await page.goto('/faults');
    await hydrated(page);
    const panel = page.locator(`[data-machine="${machine.code}"]`);
    await panel.waitFor();
    expect(await panel.locator('[data-open-stops]').innerText()).toContain(summary);
    for (const box of await panel.getByRole('checkbox').all()) await box.check();
    await panel.getByLabel(/Note/).fill('Looked fine from outside.');
    await panel.getByRole('button', { name: 'Back into service' }).click();
    const why = panel.locator('[data-panel-message]');
    await expect.poll(() => why.innerText()).toContain('open stop fault');
    expect(await why.innerText()).toContain(summary);
    expect(await why.evaluate((el) => el === document.activeElement)).toBe(true);
    expect((await testDb()('machines').where({ id: machine.id }).first()).status).toBe('out of service');
    await shot(page, 'faults-refused-desk');

    const card = page.locator(`[data-fault="${faultId}"]`);
    await card.getByLabel('Resolution (what was done)').fill('Lens replaced and focus checked.');
    const both = card.locator('[data-resolve-and-return]');
    for (const box of await both.getByRole('checkbox').all()) await box.check();
    await both.getByRole('button', { name: 'Resolve and return to service' }).click();
    await page.getByText(`${machine.name} is back in service.`).first().waitFor();
    expect((await testDb()('machines').where({ id: machine.id }).first()).status).toBe('in service');
    expect((await testDb()('faults').where({ id: faultId }).first()).status).toBe('resolved');
    const problems: string[] = [];
    problems.push(...(await checkBothWidths(page, 'faults')));
    expect(problems, problems.join('\n')).toEqual([]);
    // the refused return is a 409 the browser logs as a failed resource; nothing else may go wrong
    expect(errors.filter((e) => !e.includes('status of 409'))).toEqual([]);
    await ctx.close();
  }, 90_000);
});
