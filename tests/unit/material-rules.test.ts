/** The material-rule decision used at booking (pure). Example materials from REFERENCE.md, Materials section. */
import { describe, expect, it } from 'vitest';
import { catalogueRule, decide, effectiveRule, halogenFinding, type RuleMaterial } from '../../src/lib/material-rules';

const laserA = { id: 'a', name: 'Laser A', powerW: 60 };
const laserB = { id: 'b', name: 'Laser B', powerW: 40 };
const base = { maxCutMm: null, densityGPerCm3: null, heatOfGasificationJPerG: null, cutEfficiency: null, composition: [] as string[] };
const acrylic: RuleMaterial = { ...base, composition: ['(C5H8O2)n'], id: '1', name: 'Acrylic (PMMA)', rule: 'allowed', reason: 'Cuts cleanly.', modes: ['cut', 'engrave', 'score'], densityGPerCm3: 1.18, heatOfGasificationJPerG: 1600, cutEfficiency: 0.25 };
const pvc: RuleMaterial = { ...base, composition: ['(C2H3Cl)n'], id: '2', name: 'PVC', rule: 'blocked', reason: 'Gives off hydrogen chloride.', modes: [] };
const anodised: RuleMaterial = { ...base, composition: ['Al2O3', 'Al'], id: '3', name: 'Anodised aluminium', rule: 'limited', reason: 'Engrave only: bare metal reflects the beam.', modes: ['engrave'] };
const card: RuleMaterial = { ...base, composition: ['(C6H10O5)n'], id: '4', name: 'Card', rule: 'allowed', reason: 'Fine.', modes: ['cut', 'engrave'], maxCutMm: 3 };

describe('decide (halogen and non-halogen blocks: REFERENCE.md, Materials — university EHS laser-cutter guidance as REFERENCE.md summarises it, no single document: common practice)', () => {
  it('PVC is blocked whatever the mode, naming the material and the reason', () => {
    const d = decide(pvc, laserA, { mode: 'engrave', thicknessMm: 1 });
    expect(d.ok).toBe(false);
    if (!d.ok) {
      expect(d.code).toBe('material_blocked');
      expect(d.message).toContain('PVC');
      expect(d.message).toContain('hydrogen chloride');
    }
  });
  it('acrylic 3 mm cut is fine on both machines', () => {
    expect(decide(acrylic, laserA, { mode: 'cut', thicknessMm: 3 }).ok).toBe(true);
    expect(decide(acrylic, laserB, { mode: 'cut', thicknessMm: 3 }).ok).toBe(true);
  });
  it('anodised aluminium cut is limited (engrave only); engrave is fine', () => {
    const d = decide(anodised, laserA, { mode: 'cut', thicknessMm: 1 });
    expect(d.ok || d.code).toBe('material_limited');
    expect(decide(anodised, laserA, { mode: 'engrave', thicknessMm: 1 }).ok).toBe(true);
  });
  it('the machine’s reach is advice: by hand 40 W acrylic reaches 10/(0.2·1.888·4) = 6.6 mm, 60 W 9.9 mm; thicker warns, not refuses', () => {
    expect(effectiveRule(acrylic, laserB)).toMatchObject({ reachMm: 6.6, maxCutMm: null, maxCutBasis: 'none' });
    expect(effectiveRule(acrylic, laserA).reachMm).toBe(9.9);
    const d = decide(acrylic, laserB, { mode: 'cut', thicknessMm: 8 });
    expect(d.ok).toBe(true);
    if (d.ok) expect(d.warnings.join(' ')).toMatch(/8 mm is beyond what the estimate says Laser B \(40 W\) cuts in one pass \(about 6.6 mm\)/);
    const thin = decide(acrylic, laserB, { mode: 'cut', thicknessMm: 6 });
    expect(thin.ok && thin.warnings).toEqual([]);
    // engraving is not limited by the cut thickness
    expect(decide(acrylic, laserB, { mode: 'engrave', thicknessMm: 8 }).ok).toBe(true);
  });
  it('an explicit material cap applies when below the power-derived one', () => {
    expect(effectiveRule(card, laserA)).toMatchObject({ maxCutMm: 3, maxCutBasis: 'material' });
    expect(decide(card, laserA, { mode: 'cut', thicknessMm: 4 }).ok).toBe(false);
  });
  it('per-machine overrides replace rule, modes and thickness, and their note joins the reason', () => {
    const engraveOnly = { rule: 'limited' as const, modes: ['engrave' as const], maxCutMm: null, note: 'lens too long for clean cuts.' };
    const d = decide(acrylic, laserB, { mode: 'cut', thicknessMm: 3 }, engraveOnly);
    expect(d.ok ? 'ok' : d.code).toBe('material_limited');
    expect(d.effective.reason).toContain('On Laser B: lens too long');
    const thin = decide(acrylic, laserA, { mode: 'cut', thicknessMm: 5 }, { rule: null, modes: null, maxCutMm: 4, note: null });
    expect(thin.ok ? 'ok' : thin.code).toBe('material_limited');
    expect(thin.effective.maxCutBasis).toBe('override');
    const blocked = decide(acrylic, laserA, { mode: 'cut', thicknessMm: 3 }, { rule: 'blocked', modes: null, maxCutMm: null, note: 'extractor out.' });
    expect(blocked.ok ? 'ok' : blocked.code).toBe('material_blocked');
  });
});

describe('the halogen rule holds whatever the stored rule says (REFERENCE.md, Materials: halogen ⇒ blocked)', () => {
  const pvcAllowed: RuleMaterial = { ...pvc, rule: 'allowed', modes: ['cut'] };
  it('an override { rule: allowed, modes: [cut] } on PVC still decides material_blocked', () => {
    const d = decide(pvc, laserA, { mode: 'cut', thicknessMm: 3 }, { rule: 'allowed', modes: ['cut'], maxCutMm: null, note: null });
    expect(d.ok ? 'ok' : d.code).toBe('material_blocked');
    expect(d.effective).toMatchObject({ rule: 'blocked', halogenBlocked: true, modes: [] });
  });
  it('a stored row "allowed" with (C2H3Cl)n is treated as blocked, with the reason saying why', () => {
    const d = decide(pvcAllowed, laserB, { mode: 'engrave', thicknessMm: 1 });
    expect(d.ok ? 'ok' : d.code).toBe('material_blocked');
    expect(d.effective.reason).toMatch(/halogen rule/);
    expect(catalogueRule(pvcAllowed)).toMatchObject({ rule: 'blocked', halogenBlocked: true });
    expect(catalogueRule(acrylic)).toMatchObject({ rule: 'allowed', halogenBlocked: false });
  });
  it('a recognised name carries its halogen even with no composition: "Vinyl sheet", "PTFE tape", "FR-4 offcuts"', () => {
    for (const name of ['Vinyl sheet', 'PTFE tape', 'FR-4 offcuts']) {
      const m: RuleMaterial = { ...base, id: name, name, rule: 'allowed', reason: 'x', modes: ['cut'] };
      expect(halogenFinding(m), name).not.toBeNull();
      expect(effectiveRule(m, laserA).rule, name).toBe('blocked');
    }
    expect(halogenFinding(acrylic)).toBeNull();
  });
});
