/**
 * Journey: a cleared member books a free slot by dragging on the calendar, sees it, and cancels it; the
 * newbie is told why not (with the next step) before any form; the week view at desk width and the day view on a phone.
 */
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PHONE, shot, hydrated, settled, withBrowser } from '../support/browser';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { clearedNew, newPerson } from '../support/people';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { SITE_TZ, machines, setTestRules, siteTime, type MachineRef } from '../support/booking';
import { zonedDate } from '../../src/lib/time';
import { dragSelect, goToDay } from '../support/calendar';

const web = withBrowser();
let admin: Client;
let laserA: MachineRef; // the demo laser: only read here (the newbie's notice, the phone's day view, the Floor)
let laser: TestMachine; // the bookings go on a machine of this file's own, so the file runs beside others
let who: { email: string; password: string };
const DAY = 23; // clear of the demo seed (≤ 7 days ahead); the machine is this file's own

beforeAll(async () => {
  admin = await Client.as('admin');
  laserA = (await machines(admin))['laser-a'];
  laser = await createTestMachine(admin, 'calendar');
  await setTestRules(admin, laser.id);
  who = await clearedNew('calendar', [laser.code]); // its own person: no other file's bookings count against its quota
});
afterAll(async () => {
  await retireTestMachine(admin, laser);
});

const dateOf = (d: Date) => zonedDate(d, SITE_TZ);

async function openBook(page: Page, day: string, machineId = laser.id) {
  await page.goto(`/book?machine=${machineId}`);
  await hydrated(page);
  await goToDay(page, day);
}

describe('booking on the calendar', () => {
  it('the member books a free slot by dragging, sees it as theirs, and cancels it', async () => {
    const { ctx, page, errors } = await web.openAs(who.email);
    const day = dateOf(siteTime(DAY, 12));
    await openBook(page, day);

    await dragSelect(page, day, '10:00:00', '10:45:00');
    const form = page.getByRole('form', { name: 'Confirm your booking' });
    await form.waitFor();
    expect(await form.getByLabel('From').inputValue()).toBe('10:00');
    expect(await form.getByLabel('Until').inputValue()).toBe('11:00');
    await form.getByLabel(/Notes/).fill('Birch plywood name tags');
    await form.getByRole('button', { name: 'Book', exact: true }).click();
    await page.getByText(new RegExp(`^Booked: ${laser.name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}`)).waitFor();

    const mine = page.locator('.fc-event.bw-mine').filter({ hasText: 'Your booking' });
    await mine.first().waitFor();
    const row = await testDb()('bookings as b')
      .join('people as p', 'p.id', 'b.person_id')
      .where({ 'p.email': who.email, 'b.machine_id': laser.id, 'b.state': 'reserved' })
      .where('b.starts_at', siteTime(DAY, 10))
      .first('b.id', 'b.ends_at', 'b.notes');
    expect(row?.notes).toBe('Birch plywood name tags');
    expect(new Date(row.ends_at).toISOString()).toBe(siteTime(DAY, 11).toISOString());
    await page.mouse.move(5, 5);
    await shot(page, 'book-week-desk');

    // open it by keyboard and cancel
    await mine.first().focus();
    await page.keyboard.press('Enter');
    await page.getByRole('dialog').getByRole('button', { name: 'Cancel booking…' }).click();
    await page.getByRole('button', { name: 'Yes, cancel it' }).click();
    await page.getByText('Cancelled. The time is free for others.').waitFor();
    await page.getByRole('dialog').getByRole('button', { name: 'Close' }).click();
    await expect.poll(() => page.locator('.fc-event.bw-mine').filter({ hasText: 'Your booking' }).count()).toBe(0);
    expect((await testDb()('bookings').where({ id: row.id }).first()).state).toBe('cancelled');
    expect(errors).toEqual([]);
    await ctx.close();
  });

  it('a refused booking is taken off the calendar again with the reason (someone else has the slot)', async () => {
    const other = (await newPerson('calendar-other', { clearedFor: [laser.code] })).client;
    const res = await other.send('POST', '/api/bookings', { machineId: laser.id, startsAt: siteTime(DAY, 14).toISOString(), endsAt: siteTime(DAY, 15).toISOString(), materials: [], notes: '' });
    expect(res.status).toBe(201);
    const { ctx, page } = await web.openAs(who.email);
    const day = dateOf(siteTime(DAY, 12));
    await openBook(page, day);
    // the keyboard path: the form below the calendar
    const form = page.getByRole('form', { name: /Book by date and time|Confirm your booking/ });
    await form.getByLabel('Date').fill(day);
    await form.getByLabel('From').selectOption('14:30');
    await form.getByLabel('Until').selectOption('15:30');
    await form.getByRole('button', { name: 'Book', exact: true }).click();
    await page.getByText(/^Not booked: Someone else has that time/).waitFor();
    expect(await page.locator('.fc-event.bw-pending').count()).toBe(0);
    await page.getByRole('button', { name: 'Tell me if it frees up' }).click();
    await page.getByText('You are on the waitlist.').waitFor();
    await ctx.close();
  });

  it('the newbie is told before booking why not, with the link to the next step, and gets no booking form', async () => {
    const { ctx, page, errors } = await web.openAs('newbie');
    const day = dateOf(siteTime(DAY + 1, 12));
    await openBook(page, day, laserA.id);
    const notice = page.locator('[data-not-cleared]');
    expect(await notice.innerText()).toMatch(/not cleared on any laser yet/);
    expect(await notice.locator('li[data-machine="laser-a"]').innerText()).toMatch(/quiz/i);
    expect(await notice.getByRole('link', { name: /Your next step/ }).count()).toBeGreaterThan(0);
    expect(await page.getByRole('form', { name: 'Confirm your booking' }).count()).toBe(0);
    expect(await page.locator('.fc-event.bw-mine').count()).toBe(0);
    await shot(page, 'book-refused-newbie-desk');
    expect(errors).toEqual([]);
    await ctx.close();
  });

  it('on a phone the calendar opens in the day view and stays readable', async () => {
    const { ctx, page, errors } = await web.openAs('member', PHONE);
    await page.goto(`/book?machine=${laserA.id}`);
    await hydrated(page);
    await page.locator('.fc-timegrid-slot-lane').first().waitFor();
    // the island switches to the day view after it mounts on a narrow screen: wait for it
    await expect.poll(() => page.getByRole('button', { name: 'Day', exact: true }).getAttribute('aria-pressed'), { timeout: 20_000 }).toBe('true');
    // the seed books Laser A most days: go to tomorrow (site time) so the day shows bookings
    await page.getByRole('button', { name: 'Next day' }).click();
    await settled(page);
    expect(await page.locator('td.fc-timegrid-col[data-date]').count()).toBe(1);
    const width = await page.evaluate(() => document.documentElement.scrollWidth);
    expect(width).toBeLessThanOrEqual(PHONE.width);
    await shot(page, 'book-day-phone');
    expect(errors).toEqual([]);
    await ctx.close();
  });
});
