/**
 * Journey: the admin changes a rule on Material rules and the member's Materials screen follows. Serial: the rule is
 * the whole site's. (Screening a formula and the hazard sheet, which only read, are materials-screens.spec.ts; the
 * booking form's materials, booking-materials.spec.ts.)
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { shot, signIn, hydrated, withBrowser } from '../support/browser';
import { Client, body } from '../support/client';

const web = withBrowser();
let corkBefore: any;
beforeAll(async () => {
  const admin = await Client.as('admin');
  corkBefore = (await body(await admin.get('/api/material-rules'))).materials.find((m: any) => m.name === 'Cork');
});
afterAll(async () => {
  // put the rule back as it was, so other specs see the seeded catalogue
  const admin = await Client.as('admin');
  const { id, updatedAt: _u, ...input } = corkBefore;
  await admin.send('PUT', `/api/material-rules/${id}`, input);
});

describe('materials journey', () => {
  it('the admin blocks cork on Material rules, and the member sees it blocked with the reason', async () => {
    const { ctx, page, errors } = await web.openAs('admin');
    await page.goto('/admin/materials');
    await hydrated(page);
    await page.getByRole('row').filter({ hasText: 'PVC and vinyl' }).waitFor();
    await shot(page, 'material-rules-desk');
    await page.getByLabel('Search name or formula').fill('cork');
    await expect.poll(() => page.getByRole('row').count()).toBe(2);
    await page.getByRole('button', { name: 'Edit Cork' }).click();
    const form = page.getByRole('form', { name: 'Edit Cork' });
    await form.getByLabel('Rule', { exact: true }).selectOption('blocked');
    await form.getByLabel('Reason members read').fill('Blocked while the extractor filter is replaced.');
    await shot(page, 'material-rules-edit-desk');
    await form.getByRole('button', { name: 'Save rule' }).click();
    await page.getByText('Saved Cork (Blocked). The change is in the audit log.').waitFor();
    expect(errors).toEqual([]);
    await ctx.close();

    const { ctx: mctx, page: m } = await web.openAs(null);
    await signIn(m, 'member');
    await m.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Materials', exact: true }).click();
    await m.waitForURL('**/materials');
    const cork = m.locator('[data-material="Cork"]');
    expect(await cork.getAttribute('data-rule')).toBe('blocked');
    expect(await cork.innerText()).toContain('Blocked while the extractor filter is replaced.');
    // and it sits under the Blocked heading
    expect(await m.locator('section', { has: m.getByRole('heading', { name: /Blocked/ }) }).locator('[data-material="Cork"]').count()).toBe(1);
    await mctx.close();
  });
});
