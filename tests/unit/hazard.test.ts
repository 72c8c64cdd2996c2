/**
 * Hazard-sheet figures. Published values from REFERENCE.md (MPE table: ANSI Z136.1 / IEC 60825-1 Annex A /
 * EU 2006/25/EC; NOHD formulas: ANSI Z136.1 hazard-evaluation appendix, from memory; photon energy: CODATA
 * 2018), plus values computed by hand from the same formulas for other inputs.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_EXPOSURE_S, HazardInputError, diffuseHazardCm, hazardSheet, laserClass, mpeFarInfrared, nohdDirectCm,
  nohdFocusedCm, opticalDensity, opticalDensityExact, photonEnergyEv,
} from '../../src/lib/hazard';

describe('MPE at 1.4 µm–1 mm (REFERENCE.md: ANSI Z136.1, IEC 60825-1 Annex A, EU 2006/25/EC Annex II)', () => {
  it('t = 1 s → H = 0.56 J/cm² (published example)', () => {
    const m = mpeFarInfrared(1);
    expect(m.kind).toBe('radiant_exposure');
    expect(m.value).toBeCloseTo(0.56, 10);
  });
  it('10 s ≤ t ≤ 3e4 s → E = 0.1 W/cm² (published)', () => {
    for (const t of [10, 100, 3e4]) expect(mpeFarInfrared(t)).toMatchObject({ kind: 'irradiance', value: 0.1 });
  });
  it('1e-9 ≤ t < 1e-7 s → H = 0.01 J/cm² (from memory)', () => {
    expect(mpeFarInfrared(1e-8)).toMatchObject({ kind: 'radiant_exposure', value: 0.01 });
  });
  it('by hand: t = 0.5 s → 0.56 · 0.5^0.25 = 0.4709 J/cm², mean irradiance 0.9418 W/cm²', () => {
    const m = mpeFarInfrared(0.5);
    expect(m.value).toBeCloseTo(0.47091, 4);
    expect(m.irradianceWPerCm2).toBeCloseTo(0.94182, 4);
  });
  it('the default exposure for unintended far-infrared exposure is 10 s (ANSI Z136.1, from memory)', () => {
    expect(DEFAULT_EXPOSURE_S).toBe(10);
  });
  it('refuses durations outside the table', () => {
    expect(() => mpeFarInfrared(1e-10)).toThrow(HazardInputError);
    expect(() => mpeFarInfrared(4e4)).toThrow(HazardInputError);
  });
});

describe('hazard distances (ANSI Z136.1 hazard-evaluation appendix, from memory; REFERENCE.md)', () => {
  it('check value: 40 W, a = 0.6 cm, φ = 3 mrad, MPE 0.1 W/cm² → NOHD ≈ 73 m (REFERENCE.md)', () => {
    expect(nohdDirectCm(40, 0.1, 0.6, 0.003) / 100).toBeCloseTo(73.2, 1);
    expect(Math.sqrt((4 * 40) / (Math.PI * 0.1))).toBeCloseTo(22.57, 2); // the intermediate value REFERENCE.md gives
  });
  it('by hand: focused beam 40 W, f = 5.08 cm, b0 = 0.6 cm → (5.08/0.6)·22.568 = 191.1 cm', () => {
    expect(nohdFocusedCm(40, 0.1, 5.08, 0.6)).toBeCloseTo(191.07, 1);
  });
  it('by hand: diffuse reflection 40 W, ρ = 1, θ = 0 → √(40/(π·0.1)) = 11.28 cm; at 60° → ×√0.5', () => {
    expect(diffuseHazardCm(40, 0.1)).toBeCloseTo(11.284, 2);
    expect(diffuseHazardCm(40, 0.1, 1, 60)).toBeCloseTo(11.284 * Math.sqrt(0.5), 2);
  });
  it('is 0 when the exit beam is already below the MPE', () => {
    expect(nohdDirectCm(0.001, 0.1, 0.6, 0.003)).toBe(0);
  });
});

describe('eyewear optical density (ANSI Z136.1, from memory; REFERENCE.md)', () => {
  it('by hand: 40 W, 6 mm beam → E0 = 141.5 W/cm², OD = log10(1415) = 3.15 → 4', () => {
    expect(opticalDensityExact(40, 0.1, 0.6)).toBeCloseTo(3.1507, 3);
    expect(opticalDensity(40, 0.1, 0.6)).toBe(4);
  });
  it('by hand: a 2 mm beam is averaged over the 3.5 mm limiting aperture: 0.5 W → OD 1.716 → 2 (not 3)', () => {
    expect(opticalDensityExact(0.5, 0.1, 0.2)).toBeCloseTo(1.7158, 3);
    expect(opticalDensity(0.5, 0.1, 0.2)).toBe(2);
  });
  it('is never below 0', () => {
    expect(opticalDensity(1e-6, 0.1, 0.6)).toBe(0);
  });
});

describe('photon energy (CODATA 2018 exact constants; REFERENCE.md)', () => {
  it('10.6 µm → 0.1170 eV; 9.6 µm → 0.1292 eV', () => {
    expect(photonEnergyEv(10.6)).toBeCloseTo(0.117, 4);
    expect(photonEnergyEv(9.6)).toBeCloseTo(0.1292, 4);
  });
  it('quantum efficiency of the 10.6 µm line ≈ 40–41 % of the upper level (ν3 ≈ 2349 cm⁻¹, NIST, from memory)', () => {
    const upperEv = (6.62607015e-34 * 299792458 * 2349e2) / 1.602176634e-19;
    const q = photonEnergyEv(10.6) / upperEv;
    expect(q).toBeGreaterThan(0.39);
    expect(q).toBeLessThan(0.41);
  });
});

describe('laser class (IEC 60825-1; 21 CFR 1040.10, from memory)', () => {
  it('a CW laser above 0.5 W is Class 4', () => {
    expect(laserClass(0.51)).toBe('4');
    expect(laserClass(40)).toBe('4');
    expect(laserClass(0.5)).not.toBe('4');
  });
});

describe('hazardSheet', () => {
  const laserA = { powerW: 60, wavelengthUm: 10.6, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8 };
  it('by hand for a 60 W machine at 10 s: NOHD = (√(240/(π·0.1)) − 0.6)/0.003 cm = 90.1 m, OD 4, Class 4', () => {
    const s = hazardSheet(laserA);
    expect(s.mpeWPerCm2).toBe(0.1);
    expect(s.mpeJPerCm2).toBeUndefined();
    expect(s.nohdDirectM).toBeCloseTo(90.13, 1);
    expect(s.nohdFocusedM).toBeCloseTo((5.08 / 0.6) * Math.sqrt(240 / (Math.PI * 0.1)) / 100, 4);
    expect(s.diffuseHazardM).toBeCloseTo(Math.sqrt(60 / (Math.PI * 0.1)) / 100, 5);
    expect(s.opticalDensity).toBe(4);
    expect(s.laserClass).toBe('4');
    expect(s.photonEnergyEv).toBeCloseTo(0.117, 4);
    expect(s.figures.every((f) => f.formula && f.source)).toBe(true);
    expect(s.sources.length).toBeGreaterThanOrEqual(4);
  });
  it('below 10 s the MPE is a radiant exposure (mpeJPerCm2)', () => {
    const s = hazardSheet({ ...laserA, exposureS: 1 });
    expect(s.mpeJPerCm2).toBeCloseTo(0.56, 6);
    expect(s.mpeWPerCm2).toBeUndefined();
  });
  it('refuses out-of-range inputs', () => {
    for (const bad of [
      { powerW: -1 }, { powerW: 0 }, { divergenceMrad: 0 }, { wavelengthUm: 1.06 }, { wavelengthUm: 10.61 + 1 },
      { beamDiameterMm: 0 }, { lensFocalMm: -5 }, { exposureS: 0 },
    ]) {
      expect(() => hazardSheet({ ...laserA, ...bad }), JSON.stringify(bad)).toThrow(HazardInputError);
    }
  });
});

describe('properties (fast-check)', () => {
  const power = fc.double({ min: 0.01, max: 5000, noNaN: true });
  const diameter = fc.double({ min: 0.5, max: 20, noNaN: true });
  const divergence = fc.double({ min: 0.1, max: 50, noNaN: true });
  const exposure = fc.double({ min: 1e-9, max: 3e4, noNaN: true });
  it('NOHD (direct, focused, diffuse) never falls as power rises, and the direct one grows once above 0', () => {
    fc.assert(
      fc.property(power, power, diameter, divergence, exposure, (p1, p2, d, phi, t) => {
        const [lo, hi] = p1 < p2 ? [p1, p2] : [p2, p1];
        // powers apart by more than floating-point resolution (two doubles a few ulps apart can give the same root)
        fc.pre(hi > lo * (1 + 1e-9));
        const base = { wavelengthUm: 10.6, beamDiameterMm: d, divergenceMrad: phi, lensFocalMm: 50.8, exposureS: t };
        // the sheet (rounded to 6 significant digits) never falls
        const a = hazardSheet({ ...base, powerW: lo });
        const b = hazardSheet({ ...base, powerW: hi });
        expect(b.nohdDirectM).toBeGreaterThanOrEqual(a.nohdDirectM);
        expect(b.nohdFocusedM).toBeGreaterThanOrEqual(a.nohdFocusedM);
        expect(b.diffuseHazardM).toBeGreaterThanOrEqual(a.diffuseHazardM);
        // the unrounded distances grow strictly (the direct one once it is above 0)
        const e = mpeFarInfrared(t).irradianceWPerCm2;
        const dirLo = nohdDirectCm(lo, e, d / 10, phi / 1000);
        if (dirLo > 0) expect(nohdDirectCm(hi, e, d / 10, phi / 1000)).toBeGreaterThan(dirLo);
        expect(nohdFocusedCm(hi, e, 5.08, d / 10)).toBeGreaterThan(nohdFocusedCm(lo, e, 5.08, d / 10));
        expect(diffuseHazardCm(hi, e)).toBeGreaterThan(diffuseHazardCm(lo, e));
      }),
    );
  });
  it('the optical density never falls as power rises', () => {
    fc.assert(
      fc.property(power, power, diameter, exposure, (p1, p2, d, t) => {
        const [lo, hi] = p1 <= p2 ? [p1, p2] : [p2, p1];
        const e = mpeFarInfrared(t).irradianceWPerCm2;
        expect(opticalDensity(hi, e, d / 10)).toBeGreaterThanOrEqual(opticalDensity(lo, e, d / 10));
      }),
    );
  });
});
