/**
 * The member screens a PVC formula on Materials and reads why it is blocked; the hazard sheet of Laser A in print
 * view. Both only read the site's material rules and a demo laser's figures, so the file runs beside other files
 * (changing a rule is materials-journey.spec.ts, serial).
 */
import { describe, expect, it } from 'vitest';
import { DESK, PHONE, shot, hydrated, withBrowser } from '../support/browser';

const web = withBrowser();

describe('materials screens', () => {
  it('the member screens a PVC formula and reads why it is blocked, at desk and phone widths', async () => {
    for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
      const { ctx, page, errors } = await web.openAs('member', viewport);
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
      const { ctx, page, errors } = await web.openAs('steward', viewport);
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
