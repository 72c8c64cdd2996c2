/**
 * The Floor, the Machines screen, the Book screen for all machines and the label sheet with the demo site's three
 * machines in service (counts only a file running alone can make, as other files add test machines), and the
 * steward's upkeep forecast. Adding, editing and retiring a laser is machines-screen.spec.ts (which runs beside
 * other files).
 */
import { describe, expect, it } from 'vitest';
import { PHONE, hydrated, settled, shot, withBrowser } from '../support/browser';

const web = withBrowser();

// From the booking journey (which now runs beside other files): "all machines" shows one calendar per machine in
// service, three on the demo site — a count only a file running alone can make, as others add test machines.
describe('the Floor and the Book screen for all machines', () => {
  it('the admin sees the Machines screen and the Floor shows now and next', async () => {
    const { ctx, page, errors } = await web.openAs('admin');
    await page.goto('/');
    expect(await page.locator('[data-machine="laser-a"] [data-next]').innerText()).not.toBe('');
    await page.goto('/admin/machines');
    await hydrated(page);
    await page.getByRole('button', { name: 'Save rules' }).waitFor();
    await shot(page, 'machines-desk');
    await page.goto('/book');
    await hydrated(page);
    await page.getByLabel('Machine', { exact: true }).first().selectOption('all');
    await expect.poll(() => page.locator('[data-machine-calendar]').count()).toBe(3);
    await settled(page);
    await shot(page, 'book-all-machines-desk');
    expect(errors).toEqual([]);
    await ctx.close();
  });
});

// From the machine journey (which now runs beside other files): one label per machine in service, three on the demo
// site — a count only a file running alone can make, as others add test machines.
describe('labels and upkeep', () => {
  it('the admin prints the label sheet; the steward reads the upkeep forecast', async () => {
    const { ctx, page, errors } = await web.openAs('admin');
    await page.goto('/admin/labels');
    await hydrated(page);
    expect(await page.locator('li.label').count()).toBe(3);
    expect(await page.locator('li.label .label-art > svg').count()).toBe(3);
    await shot(page, 'labels-desk');
    await page.emulateMedia({ media: 'print' });
    await shot(page, 'labels-print');
    await ctx.close();

    const { ctx: phone, page: p2, errors: errors2 } = await web.openAs('steward', PHONE);
    await p2.goto('/upkeep');
    // the demo lens clean on Laser C is 11 days old: overdue on a 7-day interval
    expect(await p2.locator('[data-machine="laser-c"] tr[data-kind="lens_clean"]').getAttribute('data-state')).toBe('overdue');
    await shot(p2, 'upkeep-phone');
    await p2.goto('/m/laser-c');
    expect(await p2.locator('[data-upkeep-overdue]').innerText()).toMatch(/lens clean/);
    await shot(p2, 'machine-page-steward-phone');
    expect([...errors, ...errors2]).toEqual([]);
    await phone.close();
  });
});
