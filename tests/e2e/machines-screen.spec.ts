/**
 * Journey: the admin adds a new laser on the Machines screen, finds it listed with its booking rules open below,
 * raises the clearance level it needs, and later retires it with a reason; it is then gone from the Floor.
 * Screenshots: the add form, the list after adding, the retire form (desk), and the screen on a phone.
 * Runs beside other files: the laser is its own (a code of its own, retired before the file ends), and nothing here
 * counts the machines (the counts of machines in service are in machines-admin.spec.ts, which runs alone).
 */
import { describe, expect, it } from 'vitest';
import { PHONE, hydrated, shot, withBrowser } from '../support/browser';
import { testDb } from '../support/db';

const web = withBrowser();
const code = `laser-e2e-${Date.now().toString(36)}`;

describe('the Machines screen', () => {
  it('the admin adds a laser, raises its clearance level, and retires it', async () => {
    const { ctx, page, errors } = await web.openAs('admin');
    await page.goto('/admin/machines');
    await hydrated(page);

    await page.getByRole('button', { name: 'Add a machine' }).click();
    const form = page.getByRole('form', { name: 'Add a machine' });
    await form.getByLabel('Name').fill('Laser D');
    await form.getByLabel('Label code').fill(code);
    await form.getByLabel('Rated power (W)').fill('80');
    await form.getByLabel('Bed width (mm)').fill('900');
    await form.getByLabel('Bed depth (mm)').fill('600');
    // a wrong value is named beside its field, and nothing is added
    await form.getByLabel('Coolant lowest (°C)').fill('24');
    await form.getByLabel('Coolant highest (°C)').fill('18');
    await shot(page, 'machines-add-desk');
    await form.getByRole('button', { name: 'Add the machine' }).click();
    await form.getByText('The highest coolant temperature must be above the lowest.').first().waitFor();
    await form.getByLabel('Coolant lowest (°C)').fill('16');
    await form.getByLabel('Coolant highest (°C)').fill('22');
    await Promise.all([page.waitForURL(/added=1/), form.getByRole('button', { name: 'Add the machine' }).click()]);
    await hydrated(page);

    await page.getByText('Laser D is added and in service.').waitFor();
    const row = page.locator(`[data-machine-row="${code}"]`);
    await row.waitFor();
    // the rules below open on the new machine
    await page.getByRole('heading', { name: 'Booking rules of Laser D' }).waitFor();
    await shot(page, 'machines-added-desk');

    // until it has rates, the Pricing screen says its beam time is not charged
    await page.goto('/admin/pricing');
    await hydrated(page);
    // (other files' test machines may be listed beside it, while they run)
    expect(await page.getByTestId('unpriced').innerText()).toMatch(/(^|, )Laser D(, .+)? (has|have) no rates in the prices in force/);
    await page.goto('/admin/machines');
    await hydrated(page);

    await row.getByRole('button', { name: 'Edit Laser D' }).click();
    const edit = page.getByRole('form', { name: 'Edit the machine' });
    await edit.getByLabel('Clearance level needed').selectOption('advanced');
    await edit.getByRole('button', { name: 'Save the machine' }).click();
    await page.getByText('Laser D saved.').waitFor();
    await row.getByText('Advanced level').waitFor();
    const saved = await testDb()('machines').where({ code }).first('id', 'required_level', 'coolant_min_c');
    expect(saved).toMatchObject({ required_level: 'advanced', coolant_min_c: 16 });

    await row.getByRole('button', { name: 'Retire Laser D' }).click();
    const retire = page.getByRole('form', { name: 'Retire Laser D' });
    await retire.getByLabel('Why it is retired').fill('Moved to the east workshop.');
    await shot(page, 'machines-retire-desk');
    await Promise.all([page.waitForURL(/retired=/), retire.getByRole('button', { name: 'Retire Laser D' }).click()]);
    await page.getByText(/Laser D is retired\. 0 bookings were cancelled/).waitFor();
    expect(await page.locator(`[data-machine-row="${code}"]`).count()).toBe(0);
    expect((await testDb()('machines').where({ code }).first('retired_at')).retired_at).not.toBeNull();

    await page.goto('/');
    await hydrated(page);
    expect(await page.locator(`[data-machine="${code}"]`).count()).toBe(0);
    // the refused coolant range (422) shows in the console as a failed request; nothing else may
    expect(errors.filter((e) => !/422/.test(e))).toEqual([]);
    await ctx.close();
  });

  it('on a phone the list stays inside the screen', async () => {
    const { ctx, page, errors } = await web.openAs('admin', PHONE);
    await page.goto('/admin/machines');
    await hydrated(page);
    await page.locator('[data-machine-row="laser-a"]').waitFor();
    await page.getByRole('button', { name: 'Save rules' }).waitFor(); // the rules of the first machine have loaded
    await shot(page, 'machines-phone');
    // what sticks out, named, so a failure says where to look
    const wide = await page.evaluate((w) => [...document.querySelectorAll('main *')]
      .filter((el) => el.getBoundingClientRect().right > w + 1 && !el.closest('.overflow-x-auto'))
      .slice(0, 5).map((el) => `${el.tagName.toLowerCase()}.${String(el.className).slice(0, 50)} (${Math.round(el.getBoundingClientRect().right)} px)`), PHONE.width);
    expect(await page.evaluate(() => Math.max(document.documentElement.scrollWidth, document.body.scrollWidth)), wide.join('; ')).toBeLessThanOrEqual(PHONE.width);
    expect(errors).toEqual([]);
    await ctx.close();
  });
});
