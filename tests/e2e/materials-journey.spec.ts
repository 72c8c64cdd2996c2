/**
 * Journey: the admin changes a rule on Material rules and the member's Materials screen follows; the member screens
 * a PVC formula and reads why it is blocked; the hazard sheet in print view. (The booking-form part of this journey
 * arrives with the booking screen.)
 */
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, launch, newContext, shot, signIn, watchErrors, hydrated } from '../support/browser';
import { Client, body } from '../support/client';
import { closeTestDb } from '../support/db';

let browser: Browser;
let corkBefore: any;
beforeAll(async () => {
  browser = await launch();
  const admin = await Client.as('admin');
  corkBefore = (await body(await admin.get('/api/material-rules'))).materials.find((m: any) => m.name === 'Cork');
});
afterAll(async () => {
  // put the rule back as it was, so other specs see the seeded catalogue
  const admin = await Client.as('admin');
  const { id, updatedAt: _u, ...input } = corkBefore;
  await admin.send('PUT', `/api/material-rules/${id}`, input);
  await browser?.close();
  await closeTestDb();
});

describe('materials journey', () => {
  it('the admin blocks cork on Material rules, and the member sees it blocked with the reason', async () => {
    const ctx = await newContext(browser);
    const page = await ctx.newPage();
    const errors = watchErrors(page);
    await signIn(page, 'admin');
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

    const mctx = await newContext(browser);
    const m = await mctx.newPage();
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

  it('the member screens a PVC formula and reads why it is blocked, at desk and phone widths', async () => {
    for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
      const ctx = await newContext(browser, viewport);
      const page = await ctx.newPage();
      const errors = watchErrors(page);
      await signIn(page, 'member');
      await page.goto('/materials');
      await hydrated(page);
      const pvc = page.locator('[data-material="PVC and vinyl"]');
      expect(await pvc.innerText()).toMatch(/hydrogen chloride/);
      await page.getByLabel('Chemical formula (from the safety data sheet)').fill('(C2H3Cl)n');
      const result = page.getByTestId('screen-result');
      await result.getByText('■ Blocked').waitFor();
      const text = await result.innerText();
      expect(text).toMatch(/acid gases/);
      expect(text).toContain('Found: Cl');
      // an unknown symbol is named, not guessed
      await page.getByLabel('Chemical formula (from the safety data sheet)').fill('C2H3Xy');
      await result.getByText('"Xy" is not an element symbol', { exact: false }).waitFor();
      // the starting cut settings panel says it is a starting point
      await page.getByRole('region', { name: 'Starting cut settings' }).getByText(/mm\/s at full power/).waitFor();
      await shot(page, `materials-${label}`);
      expect(errors).toEqual([]);
      await ctx.close();
    }
  });

  it('the hazard sheet of Laser A in print view: figures, sources and cautions, without the navigation', async () => {
    for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
      const ctx = await newContext(browser, viewport);
      const page = await ctx.newPage();
      const errors = watchErrors(page);
      await signIn(page, 'steward');
      await page.goto('/hazard');
      await hydrated(page);
      await page.getByRole('link', { name: 'Laser A', exact: true }).click();
      await page.getByRole('heading', { level: 1, name: /Laser A — beam hazard figures/ }).waitFor();
      const table = await page.getByRole('table').innerText();
      expect(table).toContain('ANSI Z136.1');
      expect(table).toContain('Class 4');
      await page.emulateMedia({ media: 'print' });
      expect(await page.getByRole('navigation', { name: 'Main' }).isVisible()).toBe(false);
      expect(await page.getByRole('button', { name: 'Print' }).isVisible()).toBe(false);
      expect(await page.getByRole('heading', { name: 'Cautions' }).isVisible()).toBe(true);
      await shot(page, `hazard-print-${label}`);
      expect(errors).toEqual([]);
      await ctx.close();
    }
  });
});
