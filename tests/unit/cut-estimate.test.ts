/**
 * Starting cut settings: lumped energy balance v = η·P/(w·t·ρ·Lg) (Steen & Mazumder, cutting chapter, from memory;
 * REFERENCE.md). PMMA ρ ≈ 1.18 g/cm³ (datasheets) and Lg ≈ 1.6 kJ/g (SFPE Handbook, from memory).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { CutInputError, STARTING_POINT_LABEL, cuttingSpeedMmPerS, estimateCut, reachMm } from '../../src/lib/cut-estimate';

const pmma = { name: 'Acrylic', densityGPerCm3: 1.18, heatOfGasificationJPerG: 1600, efficiency: 0.25 };

describe('cut estimate', () => {
  it('by hand: PMMA, η = 0.25, 60 W, 3 mm, kerf 0.2 mm → v = 15/(0.2·3·1.888) = 13.2 mm/s, line energy 4.53 J/mm', () => {
    const e = estimateCut(pmma, { powerW: 60, thicknessMm: 3, kerfMm: 0.2 });
    expect(e.speedMmPerS).toBeCloseTo(13.2, 1);
    expect(e.lineEnergyJPerMm).toBeCloseTo(4.53, 2);
    expect(e.withinReach).toBe(true);
    expect(e.assumptions[0]).toBe(STARTING_POINT_LABEL);
  });
  it('the ideal model (η = 1) lands well above common practice: 3 mm PMMA at 40 W → by hand 40/1.1328 = 35.3 mm/s, where 5–12 mm/s is usual (common practice)', () => {
    // REFERENCE.md: the ideal model overestimates real speeds several times; the calibrated η brings it into the band
    expect(cuttingSpeedMmPerS({ ...pmma, efficiency: 1 }, 40, 3)).toBeCloseTo(35.31, 1);
    const calibrated = cuttingSpeedMmPerS(pmma, 40, 3);
    expect(calibrated).toBeGreaterThanOrEqual(5);
    expect(calibrated).toBeLessThanOrEqual(12);
  });
  it('by hand: reach at the 4 mm/s practical minimum (common practice), 40 W PMMA → 10/(0.2·1.888·4) = 6.62 mm', () => {
    expect(reachMm(pmma, 40)).toBeCloseTo(6.62, 2);
    expect(estimateCut(pmma, { powerW: 40, thicknessMm: 8 }).withinReach).toBe(false);
    expect(reachMm({ ...pmma, maxCutMm: 5 }, 40)).toBe(5);
  });
  it('refuses out-of-range numbers', () => {
    expect(() => estimateCut(pmma, { powerW: -1, thicknessMm: 3 })).toThrow(CutInputError);
    expect(() => estimateCut(pmma, { powerW: 40, thicknessMm: 0 })).toThrow(CutInputError);
    expect(() => estimateCut(pmma, { powerW: 40, thicknessMm: 3, kerfMm: 5 })).toThrow(CutInputError);
    expect(() => estimateCut({ ...pmma, efficiency: 0 }, { powerW: 40, thicknessMm: 3 })).toThrow(CutInputError);
  });
  it('property: speed falls as thickness rises and rises with power', () => {
    fc.assert(
      fc.property(fc.double({ min: 1, max: 500, noNaN: true }), fc.double({ min: 0.1, max: 50, noNaN: true }), (p, t) => {
        expect(cuttingSpeedMmPerS(pmma, p, t * 1.1)).toBeLessThan(cuttingSpeedMmPerS(pmma, p, t));
        expect(cuttingSpeedMmPerS(pmma, p * 1.1, t)).toBeGreaterThan(cuttingSpeedMmPerS(pmma, p, t));
      }),
    );
  });
});
