/**
 * Journey: in the booking form the member picks PVC and sees, before submitting, that it is blocked and why;
 * picks plywood 3 mm cut and sees it is fine on the laser; after the admin blocks plywood on that laser the form
 * follows the new rule, and a booking with a fine material goes through. Screenshot: the form with materials.
 * The laser (a glass-tube test machine of the file's own, like Laser A), its plywood override and the member are
 * the file's own; the site-wide material rules are only read, so it runs beside other files.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { shot, hydrated, withBrowser } from '../support/browser';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { clearedNew } from '../support/people';
import { SITE_TZ, setTestRules, siteTime } from '../support/booking';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { wallClock } from '../../src/lib/availability';

const web = withBrowser();
let admin: Client;
let laser: TestMachine;
let plywood: string;
let who: { email: string; password: string };
const DAY = 31;

beforeAll(async () => {
  admin = await Client.as('admin');
  laser = await createTestMachine(admin, 'bookmaterials');
  await setTestRules(admin, laser.id);
  who = await clearedNew('materials', [laser.code]); // its own person: no other file's bookings count against its quota
  plywood = (await testDb()('materials').where({ name: 'Plywood (birch or poplar)' }).first('id')).id;
});
afterAll(async () => {
  if (laser) await admin.send('DELETE', `/api/material-rules/${plywood}/overrides/${laser.id}`);
  await retireTestMachine(admin, laser);
});

describe('materials in the booking form', () => {
  it('shows why PVC is refused, follows a rule change, and books with a fine material', async () => {
    const { ctx, page, errors } = await web.openAs(who.email);
    await page.goto(`/book?machine=${laser.id}`);
    await hydrated(page);
    const form = page.getByRole('form', { name: 'Book by date and time' });
    await form.waitFor();
    const w = wallClock(siteTime(DAY, 12), SITE_TZ);
    await form.getByLabel('Date').fill(`${w.year}-${String(w.month).padStart(2, '0')}-${String(w.day).padStart(2, '0')}`);
    await form.getByLabel('From').selectOption('13:00');
    await form.getByLabel('Until').selectOption('14:00');

    const row = form.locator('[data-material-row="0"]');
    await row.getByLabel('Material 1', { exact: true }).selectOption({ label: 'PVC and vinyl (blocked)' });
    const verdict = row.getByTestId('material-verdict');
    await verdict.getByText('Not on this machine:').waitFor();
    expect(await verdict.textContent()).toMatch(/chlorine|hydrogen chloride|HCl/i);
    await shot(page, 'booking-form-materials-desk');
    // submitting is refused in the form, before any request
    await form.getByRole('button', { name: 'Book', exact: true }).click();
    await form.getByText(/not allowed on this machine as declared/).waitFor();

    await row.getByLabel('Material 1', { exact: true }).selectOption({ label: 'Plywood (birch or poplar)' });
    await row.getByLabel('Thickness 1 in mm').fill('3');
    await row.getByLabel('Mode 1').selectOption('cut');
    await verdict.getByText(/Fine on this machine as cut at 3 mm/).waitFor();

    // the admin blocks plywood on the laser; the form checks against the server's rules, so it follows at once
    const put = await admin.send('PUT', `/api/material-rules/${plywood}/overrides/${laser.id}`, { rule: 'blocked', modes: null, maxCutMm: null, note: 'Bed out for cleaning: no wood on this laser this week.' });
    expect(put.status, await put.clone().text()).toBe(200);
    await row.getByLabel('Mode 1').selectOption('engrave');
    await verdict.getByText('Not on this machine:').waitFor();

    await row.getByLabel('Material 1', { exact: true }).selectOption({ label: 'Acrylic (PMMA)' });
    await row.getByLabel('Mode 1').selectOption('cut');
    await verdict.getByText(/Fine on this machine/).waitFor();
    await form.getByRole('button', { name: 'Book', exact: true }).click();
    await page.getByText(new RegExp(`^Booked: ${laser.name}`)).waitFor(); // the name is letters, digits and spaces
    const booking = await testDb()('bookings as b').join('people as p', 'p.id', 'b.person_id')
      .where({ 'p.email': who.email, 'b.machine_id': laser.id, 'b.starts_at': siteTime(DAY, 13) }).first('b.id');
    const declared = await testDb()('booking_materials').where({ booking_id: booking.id });
    expect(declared).toHaveLength(1);
    expect(declared[0]).toMatchObject({ mode: 'cut' });
    expect(errors.filter((e) => !/422/.test(e))).toEqual([]);
    await ctx.close();
  });
});
