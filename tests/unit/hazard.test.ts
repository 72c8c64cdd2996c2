/**
 * Hazard-sheet figures. Published values from REFERENCE.md (MPE table: ANSI Z136.1 / IEC 60825-1 Annex A /
 * EU 2006/25/EC; NOHD formulas: ANSI Z136.1 hazard-evaluation appendix, from memory; photon energy: CODATA
 * 2018), plus values computed by hand from the same formulas for other inputs.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_EXPOSURE_S, HazardInputError, diameterOneOverE, diffuseHazardCm, hazardSheet, laserClass, limitingApertureCm,
  mpeFarInfrared, nohdDirectCm, nohdFocusedCm, opticalDensity, opticalDensityExact, photonEnergyEv,
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
    // REFERENCE.md's intermediate √(4P/(π·MPE)) = 22.57 cm: with a = 0 and φ = 1 rad the product's NOHD is exactly it
    expect(nohdDirectCm(40, 0.1, 0, 1)).toBeCloseTo(22.57, 2);
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

describe('limiting aperture, 1.4–100 µm (ANSI Z136.1 / IEC 60825-1, from memory; REFERENCE.md)', () => {
  it('1 mm up to 0.3 s, 1.5·t^0.375 mm below 10 s (by hand: t = 1 s → 1.5 mm, t = 5 s → 2.743 mm), 3.5 mm from 10 s', () => {
    expect(limitingApertureCm(0.001)).toBe(0.1);
    expect(limitingApertureCm(0.3)).toBe(0.1);
    expect(limitingApertureCm(1)).toBeCloseTo(0.15, 10);
    expect(limitingApertureCm(5)).toBeCloseTo(0.27428, 4);
    expect(limitingApertureCm(10)).toBe(0.35);
    expect(limitingApertureCm(3e4)).toBe(0.35);
  });
  it('a maker’s 1/e² diameter converts to 1/e by ÷ √2 (REFERENCE.md): 8.5 mm → 6.01 mm', () => {
    expect(diameterOneOverE(8.5)).toBeCloseTo(6.0104, 3);
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
  it('by hand for a 60 W machine at 10 s: NOHD direct (27.640 − 0.6)/0.003 cm = 90.1 m, focused 8.4667·27.640 cm = 2.340 m, diffuse 13.82 cm, OD 4, Class 4', () => {
    // √(4·60/(π·0.1)) = √763.94 = 27.640 cm; √(60/(π·0.1)) = 13.820 cm (hand-computed)
    const s = hazardSheet(laserA);
    expect(s.mpeWPerCm2).toBe(0.1);
    expect(s.mpeJPerCm2).toBeUndefined();
    expect(s.nohdDirectM).toBeCloseTo(90.13, 1);
    expect(s.nohdFocusedM).toBeCloseTo(2.3402, 3);
    expect(s.diffuseHazardM).toBeCloseTo(0.1382, 4);
    expect(s.opticalDensity).toBe(4);
    expect(s.laserClass).toBe('4');
    expect(s.photonEnergyEv).toBeCloseTo(0.117, 4);
    expect(s.figures.every((f) => f.formula && f.source)).toBe(true);
  });
  it('a 100 W machine needs OD 5, governed by the beam after the lens: by hand 100/(π·0.35²/4) = 1039.4 W/cm², log10(10 394) = 4.017 (exit beam alone: 3.549)', () => {
    const s = hazardSheet({ ...laserA, powerW: 100 });
    expect(s.opticalDensity).toBe(5);
    expect(s.odCase).toBe('focused_beam');
    expect(s.opticalDensityExact).toBeCloseTo(4.0168, 3);
    expect(s.odCases.find((c) => c.case === 'exit_beam')!.exact).toBeCloseTo(3.5486, 3);
    expect(s.figures.find((f) => f.key === 'od')!.label).toMatch(/after the focusing lens/);
    // just below the step: 96 W → log10(9 978) = 3.999 → OD 4
    expect(hazardSheet({ ...laserA, powerW: 96 }).opticalDensity).toBe(4);
  });
  it('a 9.6 µm machine uses the same far-infrared MPE (1.4 µm–1 mm band) and its own photon energy: 40 W → OD 4 (exact 3.619), 0.1292 eV', () => {
    const s = hazardSheet({ ...laserA, powerW: 40, wavelengthUm: 9.6 });
    expect(s.mpeWPerCm2).toBe(0.1);
    expect(s.opticalDensityExact).toBeCloseTo(3.6188, 3);
    expect(s.opticalDensity).toBe(4);
    expect(s.photonEnergyEv).toBeCloseTo(0.1292, 3); // CODATA 2018: 0.12915 eV
  });
  it('below 10 s the MPE is a radiant exposure and the aperture shrinks: by hand 100 W, t = 1 s → D_f 1.5 mm, E0 = 5659 W/cm², MPE 0.56 W/cm² → 4.005 → OD 5', () => {
    const s = hazardSheet({ ...laserA, powerW: 100, exposureS: 1 });
    expect(s.mpeJPerCm2).toBeCloseTo(0.56, 6);
    expect(s.mpeWPerCm2).toBeUndefined();
    expect(s.limitingApertureMm).toBeCloseTo(1.5, 6);
    expect(s.opticalDensityExact).toBeCloseTo(4.0045, 3);
    expect(s.opticalDensity).toBe(5);
  });
  it('by hand: 100 W, t = 0.25 s → D_f 1 mm, H = 0.56·0.25^0.25 = 0.3960 J/cm² (1.584 W/cm²), E0 = 12 732 W/cm² → 3.905 → OD 4', () => {
    const s = hazardSheet({ ...laserA, powerW: 100, exposureS: 0.25 });
    expect(s.limitingApertureMm).toBe(1);
    expect(s.opticalDensityExact).toBeCloseTo(3.9052, 3);
    expect(s.opticalDensity).toBe(4);
  });
  it('an exit beam narrower than the aperture: both cases tie and the exit beam is named', () => {
    const s = hazardSheet({ ...laserA, beamDiameterMm: 2 });
    expect(s.odCase).toBe('exit_beam');
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
