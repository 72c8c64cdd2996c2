/**
 * The safety gate against the running app and the real PostgreSQL: one halogen rule on every write (material
 * create and update, per-machine override, new-material request approval) and at booking; names screened as
 * materials; the eyewear OD for every accessible beam; the cut estimate as advice on a machine's own rule.
 * Halogen rule: REFERENCE.md, Materials (university EHS laser-cutter guidance). OD: ANSI Z136.1, from memory,
 * values hand-computed in the test titles.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';

afterAll(closeTestDb);

let member: Client;
let admin: Client;
let steward: Client;
let materials: any[];
let machines: any[];
const byName = (n: string) => materials.find((m) => m.name === n)!.id as string;
const machine = (code: string) => machines.find((m) => m.code === code)!.id as string;
const tag = Date.now().toString(36);

beforeAll(async () => {
  [member, admin, steward] = await Promise.all([Client.as('member'), Client.as('admin'), Client.as('steward')]);
  materials = await body(await member.get('/api/materials'));
  machines = await body(await member.get('/api/machines'));
});

const newMaterial = (fields: Record<string, unknown>) => ({
  name: `Gate test ${tag}`, category: 'plastic', composition: [], rule: 'allowed', reason: 'A test entry for the halogen gate.', modes: ['cut'],
  maxCutMm: null, densityGPerCm3: null, heatOfGasificationJPerG: null, cutEfficiency: null, soldBySpace: false, sheetPriceMinor: null, sheetSize: null,
  ...fields,
});

describe('one halogen rule on every write', () => {
  it('a per-machine override { rule: allowed, modes: [cut] } on PVC → 422 halogen_not_allowed with fields; nothing stored', async () => {
    const pvc = byName('PVC and vinyl');
    const res = await admin.send('PUT', `/api/material-rules/${pvc}/overrides/${machine('laser-a')}`, { rule: 'allowed', modes: ['cut'], maxCutMm: null, note: null });
    expect(res.status).toBe(422);
    const b = await body(res);
    expect(b.error.code).toBe('halogen_not_allowed');
    expect(b.error.message).toMatch(/chlorine \(Cl\)/);
    expect(b.error.fields.rule).toMatch(/blocked/);
    expect(await testDb()('material_machine_overrides').where({ material_id: pvc }).first()).toBeUndefined();
    // a note-only override on PVC (the rule stays blocked) is fine
    const note = await admin.send('PUT', `/api/material-rules/${pvc}/overrides/${machine('laser-a')}`, { rule: null, modes: null, maxCutMm: null, note: 'never, on any machine.' });
    expect(note.status).toBe(200);
    expect((await admin.send('DELETE', `/api/material-rules/${pvc}/overrides/${machine('laser-a')}`)).status).toBe(204);
  });
  it('a material saved as allowed with (C2H3Cl)n → 422 halogen_not_allowed; as limited too; as blocked it is saved', async () => {
    for (const rule of ['allowed', 'limited']) {
      const res = await admin.send('POST', '/api/material-rules', newMaterial({ composition: ['(C2H3Cl)n'], rule }));
      expect(res.status, rule).toBe(422);
      const b = await body(res);
      expect(b.error.code).toBe('halogen_not_allowed');
      expect(Object.keys(b.error.fields).sort()).toEqual(['composition', 'rule']);
    }
    const ok = await admin.send('POST', '/api/material-rules', newMaterial({ composition: ['(C2H3Cl)n'], rule: 'blocked', modes: [] }));
    expect(ok.status).toBe(201);
    const saved = await body(ok);
    // editing it back to allowed is refused the same way
    const { id, updatedAt: _u, halogenHeld: _h, ...input } = saved;
    const put = await admin.send('PUT', `/api/material-rules/${id}`, { ...input, rule: 'allowed', modes: ['cut'] });
    expect((await body(put)).error.code).toBe('halogen_not_allowed');
  });
  it('the name alone counts: "Vinyl sheet" with a cellulose formula, and SMILES C=CCl, are refused as allowed', async () => {
    const named = await admin.send('POST', '/api/material-rules', newMaterial({ name: `Vinyl sheet ${tag}`, composition: ['(C6H10O5)n'] }));
    expect((await body(named)).error.code).toBe('halogen_not_allowed');
    const smiles = await admin.send('POST', '/api/material-rules', newMaterial({ name: `Monomer ${tag}`, composition: ['C=CCl'] }));
    expect((await body(smiles)).error.code).toBe('halogen_not_allowed');
  });
  it('no composition and no recognised name → only blocked (422 composition_required); an unreadable formula → 422 invalid_formula', async () => {
    const res = await admin.send('POST', '/api/material-rules', newMaterial({ name: `Mystery board ${tag}` }));
    expect(res.status).toBe(422);
    expect((await body(res)).error).toMatchObject({ code: 'composition_required', fields: { composition: expect.any(String) } });
    const bad = await admin.send('POST', '/api/material-rules', newMaterial({ name: `Odd ${tag}`, composition: ['C2Qz'] }));
    expect((await body(bad)).error.code).toBe('invalid_formula');
    const blocked = await admin.send('POST', '/api/material-rules', newMaterial({ name: `Mystery board ${tag}`, rule: 'blocked', modes: [] }));
    expect(blocked.status).toBe(201);
  });
  it('approving a request whose formula holds fluorine as allowed → 422 halogen_not_allowed; the request stays pending; refusing works', async () => {
    const form = new FormData();
    const f = { name: `Coated fabric ${tag}`, supplier: 'Harbour Textiles', composition: '(C6H10O5)n + (C2F4)n', thicknessMm: '1', mode: 'cut' };
    for (const [k, v] of Object.entries(f)) form.set(k, v);
    form.set('sds', new Blob([new TextEncoder().encode('%PDF-1.4\n%%EOF\n')], { type: 'application/pdf' }), 'sds.pdf');
    const created = await member.fetch('/api/material-requests', { method: 'POST', body: form });
    expect(created.status).toBe(201);
    const r = await body(created);
    expect(r.screenVerdict).toBe('blocked');
    const res = await steward.send('POST', `/api/material-requests/${r.id}/decision`, { decision: 'approve', rule: 'allowed', reason: 'Looks fine.', category: 'textile', modes: ['cut'] });
    expect(res.status).toBe(422);
    const b = await body(res);
    expect(b.error.code).toBe('halogen_not_allowed');
    expect(b.error.message).toMatch(/fluorine \(F\)/);
    expect((await testDb()('material_requests').where({ id: r.id }).first()).status).toBe('pending');
    expect(await testDb()('materials').where({ name: f.name }).first()).toBeUndefined();
    expect((await steward.send('POST', `/api/material-requests/${r.id}/decision`, { decision: 'refuse', reason: 'PTFE coating: hydrogen fluoride.' })).status).toBe(200);
  });
  it('a stored row that breaks the rule is listed to the admin, shown as blocked and refused at booking until fixed', async () => {
    const [row] = await testDb()('materials').insert({ name: `Legacy vinyl ${tag}`, category: 'plastic', composition: ['(C2H3Cl)n'], rule: 'allowed', reason: 'Entered before the gate.', modes: ['cut'] }).returning('id');
    const id = row.id as string;
    try {
      const listed = (await body(await member.get('/api/materials'))).find((m: any) => m.id === id);
      expect(listed).toMatchObject({ rule: 'blocked', modes: [] });
      expect(listed.reason).toMatch(/halogen rule/);
      const check = await member.send('POST', '/api/tools/check-materials', { machineId: machine('laser-a'), materials: [{ materialId: id, thicknessMm: 3, mode: 'cut' }] });
      expect((await body(check)).error.code).toBe('material_blocked');
      const data = await body(await admin.get('/api/material-rules'));
      expect(data.violations).toEqual(expect.arrayContaining([expect.objectContaining({ materialId: id, storedRule: 'allowed', machineId: null })]));
    } finally {
      await testDb()('materials').where({ id }).update({ rule: 'blocked', modes: [] });
    }
  });
});

describe('name screening (POST /api/tools/screen-material)', () => {
  it.each(['PVC', 'ptfe', 'Vinyl sheet', 'FR-4'])('"%s" → blocked, with matchedName', async (name) => {
    const res = await member.send('POST', '/api/tools/screen-material', { name });
    expect(res.status).toBe(200);
    const b = await body(res);
    expect(b.verdict).toBe('blocked');
    expect(b.halogens.length).toBeGreaterThan(0);
    expect(b.matchedName).toBeTruthy();
  });
  it('"PVC" typed as a formula is the material, not P, V and C; both fields together; nothing at all → 422', async () => {
    const b = await body(await member.send('POST', '/api/tools/screen-material', { composition: 'PVC' }));
    expect(b).toMatchObject({ verdict: 'blocked', halogens: ['Cl'], matchedName: 'PVC (polyvinyl chloride)' });
    const both = await body(await member.send('POST', '/api/tools/screen-material', { name: 'Birch sheet', composition: 'C=CCl' }));
    expect(both).toMatchObject({ verdict: 'blocked', halogens: ['Cl'] });
    expect((await member.send('POST', '/api/tools/screen-material', {})).status).toBe(422);
  });
  it('the Materials search finds entries by abbreviation and shop name', async () => {
    const html = await (await member.get('/materials?q=vinyl')).text();
    expect(html).toContain('data-material="PVC and vinyl"');
    const byPolymerName = await (await member.get('/materials?q=polytetrafluoroethylene')).text();
    expect(byPolymerName).toContain('data-material="PTFE"');
    const pcb = await (await member.get('/materials?q=PCB')).text();
    expect(pcb).toContain('data-material="FR-4 circuit board"');
  });
});

describe('eyewear OD for every accessible beam (ANSI Z136.1, from memory)', () => {
  it('a 100 W machine: OD 5, governed by the beam after the lens — by hand 100/(π·0.35²/4) = 1039.4 W/cm², log10(10 394) = 4.017', async () => {
    const b = await body(await member.get('/api/tools/hazard?powerW=100&wavelengthUm=10.6&beamDiameterMm=6&divergenceMrad=3&lensFocalMm=50.8'));
    expect(b.opticalDensity).toBe(5);
    expect(b.odCase).toBe('focused_beam');
    expect(b.opticalDensityExact).toBeCloseTo(4.0168, 3);
  });
  it('a stored machine answers odCase and opticalDensityExact too: Laser A (60 W) → 3.795 → OD 4', async () => {
    const b = await body(await member.get(`/api/machines/${machine('laser-a')}/hazard`));
    expect(b).toMatchObject({ opticalDensity: 4, odCase: 'focused_beam' });
    expect(b.opticalDensityExact).toBeCloseTo(3.7949, 3);
  });
});

describe('the cut estimate as advice', () => {
  it('uses the machine’s rule: MDF on Laser B (blocked there) → "not on this machine"; acrylic 6 mm on Laser C → refused by the rule (5 mm)', async () => {
    const mdf = await body(await member.get(`/api/tools/cut-estimate?machineId=${machine('laser-b')}&materialId=${byName('MDF')}&thicknessMm=3`));
    expect(mdf.notOnThisMachine).toBe(true);
    expect(mdf.message).toMatch(/^Not on this machine/);
    const pmma = await body(await member.get(`/api/tools/cut-estimate?machineId=${machine('laser-c')}&materialId=${byName('Acrylic (PMMA)')}&thicknessMm=6`));
    expect(pmma).toMatchObject({ allowedByRule: false, ruleMaxCutMm: 5 });
  });
  it('3 mm plywood at 40 W (Laser B) lands in the common-practice band of about 8–15 mm/s (common practice)', async () => {
    const b = await body(await member.get(`/api/tools/cut-estimate?machineId=${machine('laser-b')}&materialId=${byName('Plywood (birch or poplar)')}&thicknessMm=3`));
    expect(b.speedMmPerS).toBeGreaterThanOrEqual(8);
    expect(b.speedMmPerS).toBeLessThanOrEqual(15);
  });
  it('the machine’s reach warns at booking instead of refusing: acrylic 8 mm on Laser B (40 W, reach ≈ 6.6 mm) → 200 with a warning', async () => {
    const res = await member.send('POST', '/api/tools/check-materials', { machineId: machine('laser-b'), materials: [{ materialId: byName('Acrylic (PMMA)'), thicknessMm: 8, mode: 'cut' }] });
    expect(res.status).toBe(200);
    const b = await body(res);
    expect(b.warnings).toHaveLength(1);
    expect(b.warnings[0]).toMatch(/about 6.6 mm/);
  });
});
