/**
 * Materials API against the running app and the real PostgreSQL: the catalogue, the booking check (through
 * POST /api/tools/check-materials, which calls checkDeclaredMaterials), halogen screening, hazard and cut-estimate
 * tools, Material rules with audit, and new-material requests with the safety data sheet in the S3 fake.
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

beforeAll(async () => {
  [member, admin, steward] = await Promise.all([Client.as('member'), Client.as('admin'), Client.as('steward')]);
  materials = await body(await member.get('/api/materials'));
  machines = await body(await member.get('/api/machines'));
});

const PDF = new TextEncoder().encode('%PDF-1.4\n1 0 obj << /Type /Catalog /Pages 2 0 R >> endobj\n2 0 obj << /Type /Pages /Kids [] /Count 0 >> endobj\ntrailer << /Root 1 0 R >>\n%%EOF\n');

function requestForm(file: Uint8Array, filename: string, fields: Record<string, string> = {}) {
  const form = new FormData();
  const f = { name: 'Birch veneer sheet', supplier: 'Harbour Timber Co', composition: '(C6H10O5)n', thicknessMm: '1.5', mode: 'cut', ...fields };
  for (const [k, v] of Object.entries(f)) form.set(k, v);
  form.set('sds', new Blob([file as Uint8Array<ArrayBuffer>], { type: 'application/pdf' }), filename);
  return form;
}

describe('GET /api/materials', () => {
  it('lists the seeded catalogue with exactly the documented fields', async () => {
    expect(materials.length).toBeGreaterThanOrEqual(20);
    const pvc = materials.find((m) => m.name === 'PVC and vinyl');
    expect(Object.keys(pvc).sort()).toEqual(['category', 'composition', 'id', 'modes', 'name', 'reason', 'rule'].sort());
    expect(pvc).toMatchObject({ rule: 'blocked', composition: ['(C2H3Cl)n'], modes: [] });
    expect(pvc.reason).toMatch(/hydrogen chloride/);
    expect(materials.find((m) => m.name === 'Acrylic (PMMA)')).toMatchObject({ rule: 'allowed', composition: ['(C5H8O2)n'] });
    expect(materials.find((m) => m.name === 'Anodised aluminium')).toMatchObject({ rule: 'limited', modes: ['engrave'] });
  });
  it('needs sign-in', async () => {
    expect((await new Client().get('/api/materials')).status).toBe(401);
  });
});

describe('the booking check (checkDeclaredMaterials via POST /api/tools/check-materials)', () => {
  const check = (machineId: string, m: object[]) => member.send('POST', '/api/tools/check-materials', { machineId, materials: m });
  it('PVC → 422 material_blocked naming the material and the reason', async () => {
    const res = await check(machine('laser-a'), [{ materialId: byName('PVC and vinyl'), thicknessMm: 3, mode: 'cut' }]);
    expect(res.status).toBe(422);
    const b = await body(res);
    expect(b.error.code).toBe('material_blocked');
    expect(b.error.message).toContain('PVC and vinyl');
    expect(b.error.message).toMatch(/hydrogen chloride/);
  });
  it('acrylic 3 mm cut → fine', async () => {
    const res = await check(machine('laser-a'), [{ materialId: byName('Acrylic (PMMA)'), thicknessMm: 3, mode: 'cut' }]);
    expect(res.status).toBe(200);
    expect(await body(res)).toEqual({ ok: true, warnings: [] });
  });
  it('anodised aluminium cut → 422 material_limited; engrave → fine', async () => {
    const res = await check(machine('laser-b'), [{ materialId: byName('Anodised aluminium'), thicknessMm: 1, mode: 'cut' }]);
    expect(res.status).toBe(422);
    expect((await body(res)).error.code).toBe('material_limited');
    expect((await check(machine('laser-b'), [{ materialId: byName('Anodised aluminium'), thicknessMm: 1, mode: 'engrave' }])).status).toBe(200);
  });
  it('per-machine overrides: acrylic 6 mm is fine on Laser A but limited on Laser C (5 mm cap); MDF is blocked on Laser B only', async () => {
    const acrylic6 = [{ materialId: byName('Acrylic (PMMA)'), thicknessMm: 6, mode: 'cut' }];
    expect((await check(machine('laser-a'), acrylic6)).status).toBe(200);
    const c = await check(machine('laser-c'), acrylic6);
    expect((await body(c)).error.code).toBe('material_limited');
    const mdf = [{ materialId: byName('MDF'), thicknessMm: 3, mode: 'cut' }];
    expect((await check(machine('laser-a'), mdf)).status).toBe(200);
    const b = await body(await check(machine('laser-b'), mdf));
    expect(b.error.code).toBe('material_blocked');
    expect(b.error.message).toMatch(/extraction/);
  });
  it('an unknown material id → 422 invalid; a bad thickness → 422', async () => {
    const res = await check(machine('laser-a'), [{ materialId: '00000000-0000-4000-8000-000000000000', thicknessMm: 3, mode: 'cut' }]);
    expect(res.status).toBe(422);
    expect((await body(res)).error.code).toBe('invalid');
    expect((await check(machine('laser-a'), [{ materialId: byName('MDF'), thicknessMm: -1, mode: 'cut' }])).status).toBe(422);
  });
});

describe('POST /api/tools/screen-material (halogen rule: REFERENCE.md, Materials)', () => {
  it('(C2H3Cl)n → the documented answer', async () => {
    const res = await member.send('POST', '/api/tools/screen-material', { composition: '(C2H3Cl)n' });
    expect(res.status).toBe(200);
    const b = await body(res);
    expect(b).toMatchObject({ elements: { C: 2, H: 3, Cl: 1 }, halogens: ['Cl'], verdict: 'blocked' });
    expect(b.reason).toMatch(/acid gas/);
  });
  it('an unknown element → 422 invalid_formula with the message', async () => {
    const res = await member.send('POST', '/api/tools/screen-material', { composition: 'C2Qz4' });
    expect(res.status).toBe(422);
    const b = await body(res);
    expect(b.error.code).toBe('invalid_formula');
    expect(b.error.message).toContain('"Qz" is not an element symbol');
  });
});

describe('hazard figures', () => {
  it('GET /api/tools/hazard: REFERENCE.md check value, 40 W, 6 mm, 3 mrad → NOHD ≈ 73 m (ANSI Z136.1, from memory)', async () => {
    const res = await member.get('/api/tools/hazard?powerW=40&wavelengthUm=10.6&beamDiameterMm=6&divergenceMrad=3&lensFocalMm=50.8');
    expect(res.status).toBe(200);
    const b = await body(res);
    expect(Object.keys(b).sort()).toEqual(['diffuseHazardM', 'laserClass', 'mpeWPerCm2', 'nohdDirectM', 'nohdFocusedM', 'odCase', 'opticalDensity', 'opticalDensityExact', 'photonEnergyEv', 'sources'].sort());
    expect(b.mpeWPerCm2).toBe(0.1); // ANSI Z136.1 / IEC 60825-1, 10 s
    expect(b.nohdDirectM).toBeCloseTo(73.2, 1);
    expect(b.laserClass).toBe('4');
    expect(b.photonEnergyEv).toBeCloseTo(0.117, 4); // CODATA 2018
    expect(b.opticalDensity).toBe(4); // by hand: whole beam in the 3.5 mm aperture, log10(4157.5) = 3.619 → 4
    expect(b.odCase).toBe('focused_beam');
  });
  it('below 10 s it answers mpeJPerCm2 (t = 1 s → 0.56 J/cm², ANSI Z136.1)', async () => {
    const b = await body(await member.get('/api/tools/hazard?powerW=40&wavelengthUm=10.6&beamDiameterMm=6&divergenceMrad=3&lensFocalMm=50.8&exposureS=1'));
    expect(b.mpeJPerCm2).toBeCloseTo(0.56, 6);
    expect(b.mpeWPerCm2).toBeUndefined();
  });
  it('out-of-range numbers → 422', async () => {
    for (const q of ['powerW=-1', 'divergenceMrad=0', 'wavelengthUm=1.06', 'powerW=abc', 'exposureS=0']) {
      const params = new URLSearchParams({ powerW: '40', wavelengthUm: '10.6', beamDiameterMm: '6', divergenceMrad: '3', lensFocalMm: '50.8' });
      const [k, v] = q.split('=') as [string, string];
      params.set(k, v);
      const res = await member.get(`/api/tools/hazard?${params}`);
      expect(res.status, q).toBe(422);
    }
    expect((await member.get('/api/tools/hazard?powerW=40')).status).toBe(422);
  });
  it('GET /api/machines/:id/hazard for Laser A (60 W): by hand NOHD 90.1 m', async () => {
    const b = await body(await member.get(`/api/machines/${machine('laser-a')}/hazard`));
    expect(b.nohdDirectM).toBeCloseTo(90.13, 1);
    expect((await member.get('/api/machines/00000000-0000-4000-8000-000000000000/hazard')).status).toBe(404);
  });
  it('the hazard sheet page shows each figure with its formula and source', async () => {
    const res = await member.get(`/hazard/${machine('laser-a')}`);
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('ANSI Z136.1');
    expect(html).toContain('CODATA 2018');
    expect(html).toContain('NOHD = (1/φ)');
    expect(html).toContain('laser safety officer');
  });
});

describe('GET /api/tools/cut-estimate', () => {
  it('acrylic 60 W 3 mm → by hand 13.2 mm/s with η = 0.25 (lumped balance, Steen & Mazumder, from memory)', async () => {
    const res = await member.get(`/api/tools/cut-estimate?powerW=60&materialId=${byName('Acrylic (PMMA)')}&thicknessMm=3&kerfMm=0.2`);
    expect(res.status).toBe(200);
    const b = await body(res);
    expect(Object.keys(b).sort()).toEqual(['allowedByRule', 'assumptions', 'lineEnergyJPerMm', 'machine', 'notes', 'reachMm', 'ruleMaxCutMm', 'speedMmPerS', 'withinReach']);
    expect(b.speedMmPerS).toBeCloseTo(13.2, 1);
    expect(b.withinReach).toBe(true);
    expect(b.assumptions[0]).toMatch(/starting point for a test cut/);
  });
  it('out of range → 422', async () => {
    expect((await member.get(`/api/tools/cut-estimate?powerW=-5&materialId=${byName('Acrylic (PMMA)')}&thicknessMm=3`)).status).toBe(422);
    expect((await member.get(`/api/tools/cut-estimate?powerW=60&materialId=${byName('PVC and vinyl')}&thicknessMm=3`)).status).toBe(422);
  });
});

describe('Material rules (admin)', () => {
  it('members and stewards get 403', async () => {
    expect((await member.get('/api/material-rules')).status).toBe(403);
    expect((await steward.send('PUT', `/api/material-rules/${byName('Glass')}`, {})).status).toBe(403);
  });
  it('an admin edits a rule; the change is audited with before and after, and the catalogue follows', async () => {
    const data = await body(await admin.get('/api/material-rules'));
    const cork = data.materials.find((m: any) => m.name === 'Cork');
    const { id, updatedAt: _u, ...input } = cork;
    const res = await admin.send('PUT', `/api/material-rules/${id}`, { ...input, rule: 'limited', modes: ['engrave'], reason: 'Engrave only this term.' });
    expect(res.status).toBe(200);
    const after = (await body(await member.get('/api/materials'))).find((m: any) => m.id === id);
    expect(after).toMatchObject({ rule: 'limited', modes: ['engrave'], reason: 'Engrave only this term.' });
    const audit = await testDb()('audit_log').where({ subject_id: id, kind: 'material.updated' }).orderBy('id', 'desc').first();
    expect(audit.summary).toMatch(/rule allowed → limited/);
    expect(audit.before.rule).toBe('allowed');
    expect(audit.after.rule).toBe('limited');
    // put it back
    expect((await admin.send('PUT', `/api/material-rules/${id}`, input)).status).toBe(200);
  });
  it('refuses invalid input with 422 and field messages, and a duplicate name with 409', async () => {
    const res = await admin.send('POST', '/api/material-rules', { name: '' });
    expect(res.status).toBe(422);
    const base = { name: 'Test board', category: 'wood', composition: [], rule: 'allowed', reason: 'x', modes: ['cut'], maxCutMm: null, densityGPerCm3: null, heatOfGasificationJPerG: null, cutEfficiency: 2, soldBySpace: true, sheetPriceMinor: null, sheetSize: null };
    const b = await body(await admin.send('POST', '/api/material-rules', base));
    // a material the space sells needs its sheet from the price list (the price is the price list's)
    expect(Object.keys(b.error.fields)).toEqual(expect.arrayContaining(['cutEfficiency', 'sheetSku']));
    const dup = await admin.send('POST', '/api/material-rules', { ...base, name: 'mdf', cutEfficiency: null, soldBySpace: false });
    expect(dup.status).toBe(409);
  });
  it('per-machine override set and removed, both audited', async () => {
    const id = byName('Glass');
    const put = await admin.send('PUT', `/api/material-rules/${id}/overrides/${machine('laser-b')}`, { rule: 'blocked', modes: null, maxCutMm: null, note: 'no rotary jig on Laser B.' });
    expect(put.status).toBe(200);
    const blocked = await member.send('POST', '/api/tools/check-materials', { machineId: machine('laser-b'), materials: [{ materialId: id, thicknessMm: 4, mode: 'engrave' }] });
    expect((await body(blocked)).error.code).toBe('material_blocked');
    expect((await admin.send('DELETE', `/api/material-rules/${id}/overrides/${machine('laser-b')}`)).status).toBe(204);
    const kinds = (await testDb()('audit_log').where({ subject_id: id }).pluck('kind')) as string[];
    expect(kinds).toEqual(expect.arrayContaining(['material.override_set', 'material.override_removed']));
  });
});

describe('sheet prices: one source, the price version on Pricing', () => {
  it('Material rules, the Materials screen and a quote show the sheet price of the version in force; a new version changes them all; the material keeps no price', async () => {
    const cols = (await testDb()('information_schema.columns').where({ table_name: 'materials' }).pluck('column_name')) as string[];
    expect(cols).toContain('sheet_sku');
    expect(cols).not.toContain('sheet_price_minor');
    // seeded: acrylic is sold as the pmma-3 sheet, NZD 18.00 in the seeded price version (seeds/07_pricing.ts)
    const now = await body(await admin.get('/api/material-rules'));
    expect(now.materials.find((m: any) => m.name === 'Acrylic (PMMA)')).toMatchObject({ sheetSku: 'pmma-3', sheetPriceMinor: 1800, sheetCurrency: 'NZD' });
    expect(now.sheets).toContainEqual(expect.objectContaining({ sku: 'pmma-3', priceMinor: 1800, currency: 'NZD' }));
    expect(await (await member.get('/materials')).text()).toContain('$18.00 a sheet');
    const laserA = machine('laser-a');
    const quoteLine = async (sku: string, at?: string) => {
      const q = await body(await member.send('POST', '/api/tools/quote', { machineId: laserA, tier: 'community', minutes: 5, materials: [{ sku, quantity: 1 }], ...(at ? { at } : {}) }));
      return q.lines.find((l: { kind: string }) => l.kind === 'material')?.unitMinor;
    };
    expect(await quoteLine('pmma-3')).toBe(1800);

    // two price versions far past every booking other files make (the API starts versions tomorrow at the earliest):
    // a new sheet at 12.34, then the same sheet at 23.45
    const day = (n: number) => new Date(Date.now() + n * 86_400_000).toISOString().slice(0, 10);
    const sku = `t-sheet-${Date.now().toString(36)}`;
    const version = (effectiveDate: string, priceMinor: number) => ({
      effectiveDate, incrementMinutes: 5, minimumChargeMinor: 500, dailyCapMinor: null, lateCancelFeeMinor: 1000, noShowFeeMinor: 1500,
      minimumRule: 'carry', rechargeTiers: [], note: 'sheet price test', rates: [{ machineId: laserA, tier: 'community', perMinuteMinor: 90 }],
      materials: [{ sku: 'pmma-3', name: '3 mm clear acrylic (PMMA), 600 × 400', priceMinor: 1800 }, { sku, name: 'Test board sheet', priceMinor }],
    });
    const v1 = await body(await admin.send('POST', '/api/pricing/versions', version(day(500), 1234)));
    const v2 = await body(await admin.send('POST', '/api/pricing/versions', version(day(501), 2345)));
    expect(v1.id && v2.id).toBeTruthy();

    // a material sold as that sheet: it names the sheet, and cannot be given a price of its own
    const input = {
      name: `Sheet price test board ${sku}`, category: 'wood', composition: ['(C6H10O5)n'], rule: 'allowed', reason: 'A test board for the one-source sheet price.',
      modes: ['cut'], maxCutMm: null, densityGPerCm3: null, heatOfGasificationJPerG: null, cutEfficiency: null, soldBySpace: true, sheetSku: sku, sheetSize: '600 × 400 × 3 mm',
    };
    const created = await admin.send('POST', '/api/material-rules', input);
    expect(created.status).toBe(201);
    const m = await body(created);
    expect(m).toMatchObject({ sheetSku: sku, sheetPriceMinor: null }); // not sold before v1 starts
    const own = await admin.send('PUT', `/api/material-rules/${m.id}`, { ...input, sheetPriceMinor: 999 });
    expect(own.status).toBe(422);
    expect((await body(own)).error.code).toBe('price_on_pricing');
    const unknown = await admin.send('PUT', `/api/material-rules/${m.id}`, { ...input, sheetSku: 'no-such-sheet' });
    expect(unknown.status).toBe(422);
    expect((await body(unknown)).error.fields).toHaveProperty('sheetSku');
    const row = await testDb()('materials').where({ id: m.id }).first();
    expect(row.sheet_sku).toBe(sku);
    expect(row).not.toHaveProperty('sheet_price_minor');

    // Material rules and the quote read the same number from whichever version is in force
    for (const [v, price] of [[v1, 1234], [v2, 2345]] as const) {
      const at = new Date(Date.parse(v.effectiveFrom) + 3_600_000).toISOString();
      const rules = await body(await admin.get(`/api/material-rules?at=${encodeURIComponent(at)}`));
      expect(rules.materials.find((x: any) => x.id === m.id)).toMatchObject({ sheetSku: sku, sheetPriceMinor: price, sheetName: 'Test board sheet' });
      expect(await quoteLine(sku, at)).toBe(price);
    }
    expect((await admin.get('/api/material-rules?at=soon')).status).toBe(422);
  });
});

describe('new-material requests', () => {
  it('a request with a PDF is stored in the S3 fake and readable back; the screening verdict comes at once', async () => {
    const res = await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(PDF, 'veneer-sds.pdf') });
    expect(res.status).toBe(201);
    const r = await body(res);
    expect(r).toMatchObject({ name: 'Birch veneer sheet', screenVerdict: 'review', status: 'pending' });
    const row = await testDb()('material_requests').where({ id: r.id }).first();
    expect(row.sds_key).toBe(`sds/${r.id}.pdf`);
    // straight from the S3 fake, by its REST API (path style)
    const direct = await fetch(`http://127.0.0.1:${process.env.TEST_S3_PORT}/${process.env.S3_BUCKET ?? 'beamwarden-uploads'}/${row.sds_key}`);
    expect(direct.status).toBe(200);
    expect(new Uint8Array(await direct.arrayBuffer())).toEqual(PDF);
    // and through the app, for the requester and a steward, not for another member
    const back = await member.get(r.sdsUrl);
    expect(back.status).toBe(200);
    expect(back.headers.get('content-type')).toBe('application/pdf');
    expect(new Uint8Array(await back.arrayBuffer())).toEqual(PDF);
    expect((await steward.get(r.sdsUrl)).status).toBe(200);
    expect((await (await Client.as('newbie')).get(r.sdsUrl)).status).toBe(404);
  });
  it('an executable disguised as a PDF is refused (415), and so is a text file', async () => {
    const exe = new Uint8Array(512);
    exe.set([0x4d, 0x5a, 0x90, 0x00]);
    exe.set(new TextEncoder().encode('PE\0\0'), 128);
    const res = await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(exe, 'datasheet.pdf') });
    expect(res.status).toBe(415);
    const b = await body(res);
    expect(b.error.code).toBe('file_type_refused');
    expect(b.error.message).toMatch(/program/);
    const txt = await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(new TextEncoder().encode('just text'), 'sds.pdf') });
    expect(txt.status).toBe(415);
  });
  it('a file over 10 MB → 413; an unreadable formula → 422 invalid_formula', async () => {
    const big = new Uint8Array(10 * 1024 * 1024 + 10);
    big.set(PDF);
    expect((await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(big, 'big.pdf') })).status).toBe(413);
    const bad = await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(PDF, 'a.pdf', { composition: 'C2Hx' }) });
    expect((await body(bad)).error.code).toBe('invalid_formula');
  });
  it('a steward approves one into the catalogue and refuses another; members may not decide; requesters are e-mailed', async () => {
    const a = await body(await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(PDF, 'a.pdf', { name: 'Bamboo ply' }) }));
    const z = await body(await member.fetch('/api/material-requests', { method: 'POST', body: requestForm(PDF, 'z.pdf', { name: 'Vinyl banner', composition: '(C2H3Cl)n' }) }));
    expect(z.screenVerdict).toBe('blocked');
    expect((await member.send('POST', `/api/material-requests/${a.id}/decision`, { decision: 'refuse', reason: 'no' })).status).toBe(403);
    const ok = await steward.send('POST', `/api/material-requests/${a.id}/decision`, { decision: 'approve', rule: 'allowed', reason: 'Bamboo ply cuts like birch ply.', category: 'wood', modes: ['cut', 'engrave'] });
    expect(ok.status).toBe(200);
    const { materialId } = await body(ok);
    const listed = (await body(await member.get('/api/materials'))).find((m: any) => m.id === materialId);
    expect(listed).toMatchObject({ name: 'Bamboo ply', rule: 'allowed', composition: ['(C6H10O5)n'] });
    const no = await steward.send('POST', `/api/material-requests/${z.id}/decision`, { decision: 'refuse', reason: 'PVC gives off hydrogen chloride.' });
    expect(no.status).toBe(200);
    expect((await steward.send('POST', `/api/material-requests/${z.id}/decision`, { decision: 'refuse', reason: 'again' })).status).toBe(409);
    const jobs = await testDb().raw(`SELECT data FROM pgboss.job WHERE name = 'mail.send' AND data->>'subject' LIKE 'Material request%'`);
    const subjects = jobs.rows.map((r: any) => r.data.subject);
    expect(subjects).toEqual(expect.arrayContaining(['Material request approved: Bamboo ply', 'Material request refused: Vinyl banner']));
    expect(jobs.rows.every((r: any) => r.data.to === 'member@tidewater.example')).toBe(true);
  });
  it('a member lists only their own requests; stewards see all; the review screen is for stewards and admins', async () => {
    const newbie = await Client.as('newbie');
    expect(await body(await newbie.get('/api/material-requests'))).toEqual([]);
    const mine = await body(await member.get('/api/material-requests'));
    expect(mine.length).toBeGreaterThanOrEqual(3);
    expect((await body(await steward.get('/api/material-requests?status=pending'))).every((r: any) => r.status === 'pending')).toBe(true);
    expect((await member.get('/materials/requests')).status).toBe(403);
    expect((await steward.get('/materials/requests')).status).toBe(200);
    expect((await member.get('/admin/materials')).status).toBe(403);
    expect((await member.get('/materials')).status).toBe(200);
  });
});
