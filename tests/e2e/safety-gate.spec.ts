/**
 * Journey: the admin tries to let PVC under the beam on Material rules — as a material rule and as a per-machine
 * override — and is refused with the reason (halogen rule: REFERENCE.md, Materials, university EHS guidance); the
 * laser safety officer reads the hazard sheet of a 100 W machine: OD 5, governed by the beam after the lens
 * (ANSI Z136.1, from memory; by hand log10(100/(π·0.35²/4)/0.1) = 4.017 → 5), on a desk and on a phone.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, shot, hydrated, withBrowser } from '../support/browser';
import { Client, body } from '../support/client';
import { testDb } from '../support/db';

const web = withBrowser();
let admin: Client;
let bigLaser: { id: string; name: string };
beforeAll(async () => {
  admin = await Client.as('admin');
  const groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const res = await admin.send('POST', '/api/machines', {
    code: `big-${Date.now().toString(36)}`, name: 'Gate test 100 W laser', groupId, requiredLevel: 'basic', powerW: 100, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 1300, bedDepthMm: 900, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  bigLaser = { id: m.id, name: m.name };
});
afterAll(async () => {
  await admin?.send('POST', `/api/machines/${bigLaser?.id}/retire`, { reason: 'Test machine for the safety-gate journey.' });
});

describe('safety gate journey', () => {
  it('the Material rules editor refuses PVC as allowed, and refuses an override that would allow it on Laser A', async () => {
    const { ctx, page } = await web.openAs('admin');
    await page.goto('/admin/materials');
    await hydrated(page);
    await page.getByRole('row').filter({ hasText: 'PVC and vinyl' }).waitFor();
    await page.getByRole('button', { name: 'Edit PVC and vinyl' }).click();
    const form = page.getByRole('form', { name: 'Edit PVC and vinyl' });
    await form.getByLabel('Rule', { exact: true }).selectOption('allowed');
    await form.getByRole('checkbox', { name: 'cut' }).first().check();
    // the screen in the form warns before saving
    expect(await form.getByTestId('rule-screen').innerText()).toMatch(/carries Cl.*only be saved as blocked/);
    await form.getByRole('button', { name: 'Save rule' }).click();
    await page.getByText(/PVC and vinyl carries chlorine \(Cl\)/).first().waitFor();
    expect(await form.getByText(/Only "blocked" is possible/).count()).toBe(1);
    await shot(page, 'material-rules-refuses-pvc-desk');

    // the per-machine override on Laser A
    const row = form.locator('[data-override="Laser A"]');
    await row.getByLabel('Rule on Laser A').selectOption('allowed');
    await row.getByRole('button', { name: 'Save' }).click();
    await row.getByRole('alert').waitFor();
    expect(await row.getByRole('alert').innerText()).toMatch(/Not saved: .*chlorine/);
    await row.scrollIntoViewIfNeeded();
    await shot(page, 'material-rules-refuses-pvc-override-desk');
    const pvc = await testDb()('materials').where({ name: 'PVC and vinyl' }).first('id', 'rule');
    expect(pvc.rule).toBe('blocked');
    expect(await testDb()('material_machine_overrides').where({ material_id: pvc.id }).first()).toBeUndefined();
    await ctx.close();

    // and on a phone
    const { ctx: pctx, page: p } = await web.openAs('admin', PHONE);
    await p.goto('/admin/materials');
    await hydrated(p);
    await p.getByRole('button', { name: 'Edit PVC and vinyl' }).click();
    const pform = p.getByRole('form', { name: 'Edit PVC and vinyl' });
    await pform.getByLabel('Rule', { exact: true }).selectOption('allowed');
    await pform.getByRole('checkbox', { name: 'cut' }).first().check();
    await pform.getByRole('button', { name: 'Save rule' }).click();
    await p.getByText(/PVC and vinyl carries chlorine \(Cl\)/).first().waitFor();
    await shot(p, 'material-rules-refuses-pvc-phone');
    await pctx.close();
  });

  it('the hazard sheet of a 100 W machine shows OD 5 and says the beam after the lens governs (desk and phone)', async () => {
    for (const [viewport, name] of [[DESK, 'desk'], [PHONE, 'phone']] as const) {
      const { ctx, page } = await web.openAs('member', viewport);
      await page.goto(`/hazard/${bigLaser.id}`);
      const eyewear = page.getByTestId('eyewear');
      expect(await eyewear.getByRole('heading').innerText()).toBe('Eyewear: at least OD 5 at 10.6 µm');
      expect(await eyewear.innerText()).toMatch(/Governed by the beam after the focusing lens.*exact figure 4\.02/s);
      expect(await page.locator('[data-figure="od"]').innerText()).toMatch(/5 OD/);
      expect(await page.locator('[data-figure="odExit"]').innerText()).toMatch(/3\.55/);
      expect(await page.locator('[data-figure="aperture"]').innerText()).toMatch(/3\.5 mm/);
      await shot(page, `hazard-sheet-100w-${name}`);
      await ctx.close();
    }
  });
});
