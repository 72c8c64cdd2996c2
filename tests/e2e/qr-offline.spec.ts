/**
 * The QR pages with no signal, in Chromium, on a machine this file creates (its stop faults bump nobody):
 * a machine page opened once is shown offline with its name, "Status as of" and the emergency steps; a stop
 * fault sent offline is saved on the phone with a plain message and sent when the connection is back — once —
 * taking the machine out of service; the same report sent twice is one row; check-in/out say they need the
 * network; the fault form works with JavaScript switched off. The JavaScript of each /m/ page is weighed
 * (gzipped, as loaded by the browser) against the 15 kB budget.
 */
import zlib from 'node:zlib';
import sharp from 'sharp';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PHONE, newContext, shot, signIn, signInContext, settled, withBrowser } from '../support/browser';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';

const web = withBrowser();
let admin: Client;
let machine: TestMachine;

beforeAll(async () => {
  admin = await Client.as('admin');
  machine = await createTestMachine(admin, 'offline');
});
afterAll(async () => {
  await retireTestMachine(admin, machine);
});

const saved = (page: Page, path: string) => page.evaluate(async (p) => !!(await caches.match(p)), path);

/** Loads `path` and adds up the JavaScript the browser ran for it (files and inline scripts), gzipped. */
async function jsWeight(page: Page, path: string): Promise<{ files: number; inline: number; gzipBytes: number }> {
  const bodies: Buffer[] = [];
  const onResponse = async (r: import('playwright-core').Response) => {
    if (r.request().resourceType() === 'script' && r.ok()) bodies.push(await r.body().catch(() => Buffer.alloc(0)));
  };
  page.on('response', onResponse);
  await page.goto(path);
  await settled(page);
  page.off('response', onResponse);
  const inline = await page.evaluate(() => [...document.querySelectorAll('script:not([src])')].map((s) => s.textContent ?? '').filter((t) => t.trim()));
  const gz = (b: Buffer | string) => zlib.gzipSync(b, { level: 9 }).byteLength;
  return { files: bodies.length, inline: inline.length, gzipBytes: bodies.reduce((n, b) => n + gz(b), 0) + inline.reduce((n, t) => n + gz(t), 0) };
}

describe('a machine page opened once works with no signal', () => {
  it('shows the saved page offline, queues a stop fault, sends it once when back online', async () => {
    const { ctx, page, errors } = await web.openAs(null, PHONE, { serviceWorkers: 'allow' }); // the worker is the subject
    await page.goto(`/m/${machine.code}`);
    await signIn(page, 'member');
    await page.goto(`/m/${machine.code}`);
    const asOf = await page.locator('[data-as-of]').getAttribute('data-as-of');
    // the worker is installed and has saved the page and its fault form
    await page.evaluate(() => navigator.serviceWorker.ready.then(() => true));
    await expect.poll(() => saved(page, `/m/${machine.code}`), { timeout: 20_000 }).toBe(true);
    await expect.poll(() => saved(page, `/m/${machine.code}/fault`), { timeout: 20_000 }).toBe(true);

    const offlineAt = Date.now();
    await ctx.setOffline(true);
    await page.reload();
    expect(await page.getByRole('heading', { level: 1 }).innerText()).toBe(machine.name);
    // the site's short clock: "1:08 am" in en-NZ, "14:05" in en-GB (the hour is one digit half the day)
    await page.getByText(/Status as of \d{1,2}[:.]\d\d/).waitFor();
    // the copy saved on the phone, not a fresh one: rendered no earlier than the page opened above and before the
    // phone went offline (when that visit was not yet served through the worker, the worker saved a render of its own
    // a moment later)
    const shownAsOf = Date.parse((await page.locator('[data-as-of]').getAttribute('data-as-of')) ?? '');
    expect(shownAsOf).toBeGreaterThanOrEqual(Date.parse(asOf ?? ''));
    expect(shownAsOf).toBeLessThanOrEqual(offlineAt);
    await page.locator('[data-offline-note]').waitFor({ state: 'visible' });
    await page.locator('[data-emergency]').waitFor();
    await page.getByRole('heading', { name: 'Hazards in short' }).waitFor();
    await shot(page, 'qr-offline-machine-phone');

    // a stop fault with a photo, sent offline: saved on the phone
    await page.getByRole('link', { name: 'Report a fault' }).click();
    await page.getByRole('heading', { name: 'Report a fault' }).waitFor();
    const summary = `Smoke at the tube end ${Date.now().toString(36)}`;
    await page.getByRole('radio', { name: /Stop/ }).check();
    await page.getByLabel('What happened?').fill(summary);
    const photo = await sharp({ create: { width: 2400, height: 1800, channels: 3, background: { r: 90, g: 110, b: 130 } } }).jpeg().toBuffer();
    await page.locator('input[type=file]').setInputFiles({ name: 'smoke.jpg', mimeType: 'image/jpeg', buffer: photo });
    await page.getByText('smoke.jpg').waitFor();
    await page.getByRole('button', { name: 'Send the report' }).click();
    await page.getByText('Saved on this phone — it will be sent when you are back online.').waitFor();
    await shot(page, 'qr-offline-queued-phone');
    expect(Number((await testDb()('faults').where({ summary }).count('* as n').first())?.n)).toBe(0);

    // back online: sent within 30 s, stored once, the machine out of service
    await ctx.setOffline(false);
    await expect.poll(async () => Number((await testDb()('faults').where({ summary }).count('* as n').first())?.n), { timeout: 30_000, interval: 500 }).toBe(1);
    expect((await testDb()('machines').where({ id: machine.id }).first()).status).toBe('out of service');
    const row = await testDb()('faults').where({ summary }).first();
    expect(row.client_id).toMatch(/^[0-9a-f-]{36}$/);
    expect(row.photos).toHaveLength(1);
    expect(row.photos[0].width).toBeLessThanOrEqual(1600); // shrunk on the phone before sending
    await page.getByText(/is sent\./).waitFor();

    // the same report sent again (a second tab, a retry): answered with the same fault, still one row
    const again = await page.evaluate(async ({ code, clientId, summary }) => {
      const form = new FormData();
      form.set('summary', summary);
      form.set('severity', 'stop');
      form.set('clientId', clientId);
      const res = await fetch(`/api/machines/${code}/faults`, { method: 'POST', body: form, headers: { accept: 'application/json' } });
      return { status: res.status, body: await res.json() };
    }, { code: machine.code, clientId: row.client_id as string, summary });
    expect(again.status).toBe(200);
    expect(again.body.fault.id).toBe(row.id);
    expect(Number((await testDb()('faults').where({ summary }).count('* as n').first())?.n)).toBe(1);

    // the machine page now shows it out of service
    await page.goto(`/m/${machine.code}`);
    expect(await page.locator('[data-status-pill]').innerText()).toContain('Out of service');
    expect(errors.filter((e) => !/net::ERR_INTERNET_DISCONNECTED|Failed to fetch|Failed to load resource/.test(e))).toEqual([]);
    await ctx.close();
  }, 120_000);
});

describe('the fault form without JavaScript', () => {
  it('refuses a report without severity keeping the answers, then files it with a photo', async () => {
    const ctx = await newContext(web.browser, PHONE, { javaScriptEnabled: false });
    await signInContext(ctx, 'member');
    const page = await ctx.newPage();
    await page.goto(`/m/${machine.code}/fault`);
    const summary = `Honeycomb bent ${Date.now().toString(36)}`;
    await page.getByLabel('What happened?').fill(summary);
    await page.getByLabel(/More detail/).fill('Front left corner.');
    await page.getByRole('button', { name: 'Send the report' }).click();
    await page.getByText('Choose note, degraded or stop.').waitFor();
    expect(await page.getByLabel('What happened?').inputValue()).toBe(summary);
    expect(await page.getByLabel(/More detail/).inputValue()).toBe('Front left corner.');
    await shot(page, 'fault-form-nojs-refused-phone');
    await page.getByRole('radio', { name: /Note/ }).check();
    const photo = await sharp({ create: { width: 320, height: 240, channels: 3, background: { r: 30, g: 110, b: 30 } } }).jpeg().toBuffer();
    await page.locator('input[type=file]').setInputFiles({ name: 'bed.jpg', mimeType: 'image/jpeg', buffer: photo });
    await page.getByRole('button', { name: 'Send the report' }).click();
    await page.getByText('Thank you — the report is in.').waitFor();
    expect(new URL(page.url()).pathname).toBe(`/m/${machine.code}`);
    const row = await testDb()('faults').where({ summary }).first();
    expect(row.photos).toHaveLength(1);
    await ctx.close();
  }, 60_000);
});

describe('JavaScript weight of the /m/ pages', () => {
  it('each page loads at most 15 kB of gzipped JavaScript', async () => {
    const out: Record<string, number> = {};
    const { ctx: anon, page: a } = await web.openAs(null, PHONE);
    out['machine page, signed out'] = (await jsWeight(a, `/m/${machine.code}`)).gzipBytes;
    await anon.close();
    const { ctx, page } = await web.openAs('member', PHONE);
    out['machine page, signed in'] = (await jsWeight(page, `/m/${machine.code}`)).gzipBytes;
    out['fault form'] = (await jsWeight(page, `/m/${machine.code}/fault`)).gzipBytes;
    await ctx.close();
    console.log(`gzipped JavaScript per /m/ page (bytes): ${JSON.stringify(out)}`);
    for (const [name, bytes] of Object.entries(out)) expect(bytes, name).toBeLessThanOrEqual(15 * 1024);
  }, 60_000);
});
