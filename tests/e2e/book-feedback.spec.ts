/**
 * Journey: what a first-week member sees on the Book screen. The form follows `/book?machine=`, the calendar's
 * week and the machine's open hours, and shows the week's minutes; after a refused and after an accepted
 * booking the answer is next to the Book button, inside the viewport and focused; a booking opens in a dialog
 * where the person clicked, and "Cancel booking" asks first, saying what cancelling costs. At desk and phone
 * widths, with axe-core on the screen and on the open dialog.
 */
import type { Locator, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, shot, signIn, hydrated, settled, SCREENSHOTS, withBrowser } from '../support/browser';
import { axe } from '../support/axe';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { clearedNew, newPerson } from '../support/people';
import { createTestMachine, priceTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { SITE_TZ, setTestRules, siteTime } from '../support/booking';
import { zonedDate } from '../../src/lib/time';

const DAY = 26; // on a machine of this file's own: no other file books it, so any day works

const web = withBrowser();
let admin: Client;
let laser: TestMachine; // its own (priced) machine: runs beside other files, whose bookings and rules it never meets
let who: { email: string; password: string };
/** The machine's name inside a RegExp. */
const named = () => laser.name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');

beforeAll(async () => {
  admin = await Client.as('admin');
  laser = await createTestMachine(admin, 'bookfeedback');
  await priceTestMachine(laser.id, 150);
  await setTestRules(admin, laser.id); // open 08:00–22:00 every day, 15-min grid, community limit 4 h a week
  who = await clearedNew('bookfeedback', [laser.code]); // no saved card: beam time is charged at check-out
});
afterAll(async () => {
  await retireTestMachine(admin, laser);
});

const dateOf = (d: Date) => zonedDate(d, SITE_TZ);

/** The element is inside the viewport (wholly, or filling it) and holds the keyboard focus. */
async function seenAndFocused(page: Page, el: Locator): Promise<void> {
  await el.waitFor();
  await expect.poll(() => el.evaluate((n) => n === document.activeElement || n.contains(document.activeElement))).toBe(true);
  const box = (await el.boundingBox())!;
  const vp = page.viewportSize()!;
  expect(box.y, 'top inside the viewport').toBeGreaterThanOrEqual(0);
  expect(box.y + Math.min(box.height, vp.height), 'bottom inside the viewport').toBeLessThanOrEqual(vp.height + 1);
}

/** What the person sees right now (the viewport), beside the full-page shot. */
async function view(page: Page, name: string): Promise<void> {
  await shot(page, name);
  if (SCREENSHOTS) await page.screenshot({ path: `screenshots/${name}-view.png` });
}

async function openBook(page: Page) {
  await page.goto(`/book?machine=${laser.id}`);
  await hydrated(page);
  await page.locator('.fc-timegrid-slot-lane').first().waitFor();
  await settled(page);
}

describe('the Book screen as a first-week member meets it', () => {
  it('desk: the form follows the machine, week and open hours; refused and accepted answers are seen and focused; cancel asks first', async () => {
    const steward = (await newPerson('bf-keeper', { roles: ['steward'], clearedFor: [laser.code] })).client;
    const taken = await steward.send('POST', '/api/bookings', { machineId: laser.id, startsAt: siteTime(DAY, 14).toISOString(), endsAt: siteTime(DAY, 15).toISOString(), materials: [], notes: '' });
    expect(taken.status).toBe(201);

    const { ctx, page, errors } = await web.openAs(null);
    await signIn(page, who.email);
    await openBook(page);
    const form = page.getByRole('form', { name: 'Book by date and time' });
    // /book?machine=<id> chooses the machine in the form too
    expect(await form.getByLabel('Machine').inputValue()).toBe(laser.id);

    // moving the calendar moves the form's date into the week shown
    const day = dateOf(siteTime(DAY, 12));
    await page.getByLabel('Go to date').fill(day);
    await page.locator(`td.fc-timegrid-col[data-date="${day}"]`).waitFor();
    await settled(page);
    const formDate = await form.getByLabel('Date').inputValue();
    const shownDays = await page.locator('td.fc-timegrid-col[data-date]').evaluateAll((els) => els.map((e) => e.getAttribute('data-date')));
    expect(shownDays).toContain(formDate);
    await form.getByLabel('Date').fill(day);

    // From and Until list only the open hours (08:00–22:00 in the test rules)
    await expect.poll(() => form.getByLabel('From').locator('option').first().innerText()).toBe('08:00');
    const from = await form.getByLabel('From').locator('option').allInnerTexts();
    expect(from).not.toContain('03:00');
    expect(from.at(-1)).toBe('21:45');
    await form.getByLabel('From').selectOption('21:00');
    expect((await form.getByLabel('Until').locator('option').allInnerTexts()).at(-1)).toBe('22:00');

    // this week's minutes on the chosen machine, before submitting
    await expect.poll(() => form.locator('[data-week-use]').innerText()).toMatch(new RegExp(`This week on ${named()}: 0 min booked, 4 h left of your 4 h weekly limit`));

    // refused (the steward has 14:00–15:00): the answer sits by the Book button, in view, with the focus
    await form.getByLabel('From').selectOption('14:30');
    await form.getByLabel('Until').selectOption('15:30');
    await page.getByRole('button', { name: 'Book', exact: true }).click();
    const answer = page.locator('[data-answer="form"]');
    await seenAndFocused(page, answer);
    expect(await answer.innerText()).toMatch(/^Not booked: Someone else has that time/);
    expect(await answer.locator('xpath=..').getAttribute('role')).toBe('alert');
    await view(page, 'book-refused-desk');

    // accepted: in view, focused; with no saved card the words are plain and the style neutral
    await form.getByLabel('From').selectOption('10:00');
    await form.getByLabel('Until').selectOption('11:00');
    await page.getByRole('button', { name: 'Book', exact: true }).click();
    await page.locator('[data-answer="form"]', { hasText: `Booked: ${laser.name}` }).waitFor();
    await seenAndFocused(page, answer);
    expect(await answer.innerText()).toMatch(/charged at check-out/);
    expect(await answer.getAttribute('class')).toContain('notice-info');
    expect(await answer.locator('xpath=..').getAttribute('role')).toBe('status');
    await view(page, 'book-accepted-desk');
    await expect.poll(() => form.locator('[data-week-use]').innerText()).toMatch(/1 h booked, 3 h left/);

    const row = await testDb()('bookings as b').join('people as p', 'p.id', 'b.person_id').where({ 'p.email': who.email, 'b.state': 'reserved' }).first('b.id');
    expect(row).toBeTruthy();

    // the booking opens in a dialog where the person is looking; Cancel asks first and says what it costs
    const mine = page.locator('.fc-event.bw-mine').filter({ hasText: 'Your booking' }).first();
    await mine.click();
    await page.getByRole('dialog', { name: new RegExp(`Your booking · ${named()}`) }).waitFor();
    const dialog = page.getByRole('dialog'); // its name changes to the question below
    const box = (await dialog.boundingBox())!;
    expect(box.y).toBeGreaterThanOrEqual(0);
    expect(box.y + box.height).toBeLessThanOrEqual(DESK.height);
    await dialog.getByRole('button', { name: 'Cancel booking…' }).click();
    await page.getByRole('dialog', { name: 'Cancel this booking?' }).waitFor();
    const terms = await dialog.locator('[data-cancel-terms]').innerText();
    expect(terms).toMatch(/No fee: you are cancelling before the cut-off/);
    expect(terms).toMatch(/Nothing is held on your card for this booking/);
    // asking is not cancelling
    expect((await testDb()('bookings').where({ id: row.id }).first('state')).state).toBe('reserved');
    expect(await page.evaluate(() => document.activeElement?.textContent)).toBe('Keep booking');
    const problems = await axe(page);
    await view(page, 'book-cancel-confirm-desk');
    await dialog.getByRole('button', { name: 'Yes, cancel it' }).click();
    const done = dialog.locator('[data-answer="booking"]');
    await seenAndFocused(page, done);
    expect(await done.innerText()).toBe('Cancelled. The time is free for others.');
    expect((await testDb()('bookings').where({ id: row.id }).first('state')).state).toBe('cancelled');
    await dialog.getByRole('button', { name: 'Close' }).click();
    await expect.poll(() => page.getByRole('dialog').count()).toBe(0);
    await expect.poll(() => page.locator('.fc-event.bw-mine').filter({ hasText: 'Your booking' }).count()).toBe(0);

    problems.push(...(await axe(page)));
    expect(problems, problems.join('\n')).toEqual([]);
    expect(errors.filter((e) => !/409/.test(e))).toEqual([]);
    await ctx.close();
  }, 120_000);

  it('phone: the refused and the accepted answer are in view and focused; the dialog fits the screen', async () => {
    const { ctx, page, errors } = await web.openAs(null, PHONE);
    await signIn(page, who.email);
    await openBook(page);
    await expect.poll(() => page.getByRole('button', { name: 'Day', exact: true }).getAttribute('aria-pressed'), { timeout: 20_000 }).toBe('true');
    const day = dateOf(siteTime(DAY + 1, 12));
    await page.getByLabel('Go to date').fill(day);
    await page.locator(`td.fc-timegrid-col[data-date="${day}"]`).waitFor();
    await settled(page);
    const form = page.getByRole('form', { name: 'Book by date and time' });
    // the form's date followed the calendar's day
    expect(await form.getByLabel('Date').inputValue()).toBe(day);
    const problems = await axe(page);
    await shot(page, 'book-form-phone');

    // refused by the rules: longer than the machine allows (3 h)
    await form.getByLabel('From').selectOption('09:00');
    await form.getByLabel('Until').selectOption('13:00');
    await page.getByRole('button', { name: 'Book', exact: true }).click();
    const answer = page.locator('[data-answer="form"]');
    await seenAndFocused(page, answer);
    expect(await answer.innerText()).toMatch(/^Not booked:/);
    await view(page, 'book-refused-phone');

    await form.getByLabel('Until').selectOption('10:00');
    await page.getByRole('button', { name: 'Book', exact: true }).click();
    await page.locator('[data-answer="form"]', { hasText: `Booked: ${laser.name}` }).waitFor();
    await seenAndFocused(page, answer);
    await view(page, 'book-accepted-phone');

    await page.locator('.fc-event.bw-mine').filter({ hasText: 'Your booking' }).first().click();
    const dialog = page.getByRole('dialog');
    await dialog.waitFor();
    const box = (await dialog.boundingBox())!;
    expect(box.x).toBeGreaterThanOrEqual(0);
    expect(box.x + box.width).toBeLessThanOrEqual(PHONE.width);
    await dialog.getByRole('button', { name: 'Cancel booking…' }).click();
    await dialog.locator('[data-cancel-terms]').waitFor();
    problems.push(...(await axe(page)));
    await view(page, 'book-cancel-confirm-phone');
    await dialog.getByRole('button', { name: 'Yes, cancel it' }).click();
    await seenAndFocused(page, dialog.locator('[data-answer="booking"]'));
    expect(problems, problems.join('\n')).toEqual([]);
    expect(errors.filter((e) => !/422/.test(e))).toEqual([]);
    await ctx.close();
  }, 120_000);
});
