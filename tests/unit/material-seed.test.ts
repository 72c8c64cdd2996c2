/**
 * The seeded catalogue agrees with the halogen rule and the nitrogen guidance (REFERENCE.md, Materials: university
 * EHS laser-cutter guidance; chemistry of the compositions from memory). These checks read the seed data itself,
 * so a halogen- or nitrogen-bearing entry seeded as allowed makes them fail.
 */
import { describe, expect, it } from 'vitest';
import { SEED_MATERIALS } from '../../seeds/05_materials';
import { SEED_SHEETS } from '../../seeds/07_pricing';
import { screenComposition, screenMaterial } from '../../src/lib/halogen-screen';
import { halogenFinding } from '../../src/lib/material-rules';
import { cuttingSpeedMmPerS } from '../../src/lib/cut-estimate';

const byName = (n: string) => SEED_MATERIALS.find((m) => m.name === n)!;

describe('seeded materials', () => {
  it('every composition parses, and only blocked entries may have none', () => {
    for (const m of SEED_MATERIALS) for (const f of m.composition) expect(() => screenComposition(f), `${m.name}: ${f}`).not.toThrow();
    for (const m of SEED_MATERIALS) if (m.rule !== 'blocked') expect(m.composition.length, m.name).toBeGreaterThan(0);
  });
  it('every halogen-bearing material (by composition or by name) is blocked', () => {
    let halogenBearing = 0;
    for (const m of SEED_MATERIALS) {
      if (halogenFinding({ name: m.name, composition: m.composition })) {
        halogenBearing++;
        expect(m.rule, m.name).toBe('blocked');
      }
    }
    expect(halogenBearing).toBeGreaterThanOrEqual(7); // PVC, PVDC, neoprene, PTFE, PVDF, FR-4, faux leather
  });
  it('nitrogen-bearing materials are never plainly allowed: limited or blocked, with the fume reason (common guidance)', () => {
    const withN = SEED_MATERIALS.filter((m) => m.composition.length && (screenComposition(m.composition).elements.N ?? 0) > 0);
    for (const m of withN) {
      expect(m.rule, m.name).not.toBe('allowed');
      expect(m.reason, m.name).toMatch(/cyanide|formaldehyde|nitrogen/i);
    }
    // the natural materials that carry nitrogen are seeded with it (protein; urea-formaldehyde binder)
    expect(withN.map((m) => m.name)).toEqual(expect.arrayContaining(['MDF', 'Wool and felt', 'Vegetable-tanned leather', 'ABS', 'Nylon (polyamide)']));
    expect(byName('MDF').reason).toMatch(/formaldehyde/);
  });
  it('a name the screener blocks is blocked in the catalogue too', () => {
    for (const m of SEED_MATERIALS) if (screenMaterial({ name: m.name }).verdict === 'blocked') expect(m.rule, m.name).toBe('blocked');
  });
  it('the materials the review found missing are in the catalogue with a reason', () => {
    for (const n of ['Nylon (polyamide)', 'PET and PETG', 'Solid polystyrene and HIPS', 'Foam-core board', 'EVA foam', 'Faux leather (PVC or PU coated)', 'Painted, stained or pressure-treated wood']) {
      expect(byName(n), n).toBeDefined();
      expect(byName(n).reason.length, n).toBeGreaterThan(40);
    }
    const names = SEED_MATERIALS.filter((m) => m.rule === 'blocked').map((m) => m.name);
    for (const n of ['PVC and vinyl', 'PTFE', 'ABS', 'Polycarbonate', 'HDPE', 'Neoprene', 'FR-4 circuit board']) expect(names).toContain(n);
  });
  it('blocked materials have no modes; others at least one; every reason is written out', () => {
    for (const m of SEED_MATERIALS) {
      expect(m.rule === 'blocked' ? m.modes.length === 0 : m.modes.length > 0, m.name).toBe(true);
      expect(m.reason.length, m.name).toBeGreaterThan(20);
    }
  });
  it('every material the space sells names a sheet of the seeded price list, which holds its price (one source)', () => {
    const sold = SEED_MATERIALS.filter((m) => m.sold_by_space);
    expect(sold.map((m) => m.name)).toEqual(expect.arrayContaining(['Acrylic (PMMA)', 'Plywood (birch or poplar)', 'MDF', 'Card and cardboard']));
    const skus = SEED_SHEETS.map((s) => s.sku);
    for (const m of sold) expect(skus, m.name).toContain(m.sheet_sku);
    expect(new Set(sold.map((m) => m.sheet_sku)).size).toBe(sold.length);
    for (const m of SEED_MATERIALS) expect(Object.keys(m), m.name).not.toContain('sheet_price_minor');
    // the acrylic a member reads on Materials and pays at check-out: NZD 18.00 (seeds/07_pricing.ts)
    expect(SEED_SHEETS.find((s) => s.sku === SEED_MATERIALS.find((m) => m.name === 'Acrylic (PMMA)')!.sheet_sku)!.priceMinor).toBe(1800);
  });
  it('anodised aluminium, glass and stone are engrave-only (REFERENCE.md)', () => {
    for (const n of ['Anodised aluminium', 'Glass', 'Stone, slate and tile']) expect(byName(n).modes).toEqual(['engrave']);
  });
});

describe('cut-estimate calibration of the seed (common practice: 3 mm sheet on a hobby/teaching CO2 cutter)', () => {
  // Common practice, no single source: 3 mm plywood or MDF cuts in one pass at roughly 8–15 mm/s on 40 W and
  // 12–22 mm/s on 60 W; 3 mm cast acrylic at roughly 5–12 mm/s on 40 W and 8–18 mm/s on 60 W.
  const band: Record<string, Record<number, [number, number]>> = {
    'Plywood (birch or poplar)': { 40: [8, 15], 60: [12, 22] },
    MDF: { 40: [8, 15], 60: [12, 22] },
    'Solid wood': { 40: [8, 15], 60: [12, 22] },
    'Acrylic (PMMA)': { 40: [5, 12], 60: [8, 18] },
  };
  for (const [name, byPower] of Object.entries(band)) {
    for (const [p, [lo, hi]] of Object.entries(byPower)) {
      it(`${name}, 3 mm at ${p} W lands in ${lo}–${hi} mm/s`, () => {
        const m = byName(name);
        const v = cuttingSpeedMmPerS({ name, densityGPerCm3: m.density_g_cm3!, heatOfGasificationJPerG: m.heat_gasification_j_g!, efficiency: m.cut_efficiency! }, Number(p), 3);
        expect(v).toBeGreaterThanOrEqual(lo);
        expect(v).toBeLessThanOrEqual(hi);
      });
    }
  }
  it('by hand: plywood η = 0.28, 40 W, 3 mm, kerf 0.2 mm → 11.2 / (0.2·3·0.68e-3·2500 = 1.02 J/mm) = 10.98 mm/s', () => {
    const m = byName('Plywood (birch or poplar)');
    expect(cuttingSpeedMmPerS({ name: 'ply', densityGPerCm3: m.density_g_cm3!, heatOfGasificationJPerG: m.heat_gasification_j_g!, efficiency: m.cut_efficiency! }, 40, 3)).toBeCloseTo(10.98, 2);
  });
});
