/**
 * Starting cut settings (pure; no I/O): the lumped energy balance of laser cutting,
 *   η·P = w · t · v · ρ · Lg   →   v = η·P / (w · t · ρ · Lg),
 * where Lg is one heat of gasification for plastics that depolymerise (and an effective value for wood and
 * paper), η the fraction of the beam power that goes into removing material (calibrated per material by an
 * admin), w the kerf, t the thickness. The ideal model (η = 1) overestimates real speeds several times, so
 * the result is always a starting point for a test cut, never a setting to trust blind.
 * Source: Steen & Mazumder, "Laser Material Processing", chapter on cutting (lumped model; from memory).
 */

export const DEFAULT_KERF_MM = 0.2;
/** Below this speed a cut is impractical on a hobby or teaching CO2 cutter (flaming, charring): common practice. */
export const MIN_PRACTICAL_SPEED_MM_S = 4;

export const STARTING_POINT_LABEL = 'A starting point for a test cut, not a setting to trust: cut a small test piece first and adjust.';

export interface CutMaterial {
  name: string;
  /** g/cm³ */
  densityGPerCm3: number;
  /** J/g */
  heatOfGasificationJPerG: number;
  /** 0 < η ≤ 1 */
  efficiency: number;
  /** An explicit cap on the thickness this material may be cut at (mm), if any. */
  maxCutMm?: number | null;
}

export interface CutInput {
  powerW: number;
  thicknessMm: number;
  kerfMm?: number;
}

export interface CutEstimate {
  speedMmPerS: number;
  lineEnergyJPerMm: number;
  withinReach: boolean;
  /** The thickness at which the estimated speed falls to the practical minimum, mm. */
  reachMm: number;
  assumptions: string[];
}

export const CUT_LIMITS = {
  powerW: { min: 0, max: 10_000 },
  thicknessMm: { min: 0, max: 100 },
  kerfMm: { min: 0.01, max: 2 },
} as const;

export class CutInputError extends Error {
  constructor(public readonly field: string, message: string) {
    super(message);
    this.name = 'CutInputError';
  }
}

/** Removal energy per unit volume: ρ·Lg in J/mm³ (ρ in g/cm³ → g/mm³ is ÷1000). */
function joulesPerMm3(m: CutMaterial): number {
  return (m.densityGPerCm3 / 1000) * m.heatOfGasificationJPerG;
}

/** v = η·P / (w·t·ρ·Lg), mm/s. */
export function cuttingSpeedMmPerS(m: CutMaterial, powerW: number, thicknessMm: number, kerfMm = DEFAULT_KERF_MM): number {
  return (m.efficiency * powerW) / (kerfMm * thicknessMm * joulesPerMm3(m));
}

/** Thickness at which the estimated speed equals the practical minimum: t = η·P / (w·ρ·Lg·vmin), mm. */
export function reachMm(m: CutMaterial, powerW: number, kerfMm = DEFAULT_KERF_MM): number {
  const derived = (m.efficiency * powerW) / (kerfMm * joulesPerMm3(m) * MIN_PRACTICAL_SPEED_MM_S);
  return m.maxCutMm != null ? Math.min(derived, m.maxCutMm) : derived;
}

export function validateCutMaterial(m: CutMaterial): void {
  if (!(m.densityGPerCm3 > 0) || !(m.heatOfGasificationJPerG > 0)) throw new CutInputError('materialId', `${m.name} has no density or heat of gasification on record; it cannot be estimated.`);
  if (!(m.efficiency > 0 && m.efficiency <= 1)) throw new CutInputError('materialId', `${m.name} has an efficiency outside 0–1.`);
}

export function estimateCut(m: CutMaterial, input: CutInput): CutEstimate {
  const kerf = input.kerfMm ?? DEFAULT_KERF_MM;
  const { powerW, thicknessMm } = input;
  if (!(powerW > CUT_LIMITS.powerW.min && powerW <= CUT_LIMITS.powerW.max)) throw new CutInputError('powerW', 'Power must be above 0 W and at most 10 000 W.');
  if (!(thicknessMm > CUT_LIMITS.thicknessMm.min && thicknessMm <= CUT_LIMITS.thicknessMm.max)) throw new CutInputError('thicknessMm', 'Thickness must be above 0 mm and at most 100 mm.');
  if (!(kerf >= CUT_LIMITS.kerfMm.min && kerf <= CUT_LIMITS.kerfMm.max)) throw new CutInputError('kerfMm', 'Kerf must be between 0.01 mm and 2 mm.');
  validateCutMaterial(m);
  const v = cuttingSpeedMmPerS(m, powerW, thicknessMm, kerf);
  const reach = reachMm(m, powerW, kerf);
  return {
    speedMmPerS: Number(v.toPrecision(3)),
    lineEnergyJPerMm: Number((powerW / v).toPrecision(3)),
    withinReach: thicknessMm <= reach + 1e-9,
    reachMm: Number(reach.toPrecision(3)),
    assumptions: [
      STARTING_POINT_LABEL,
      'Lumped energy balance η·P = w·t·v·ρ·Lg (Steen & Mazumder, Laser Material Processing, cutting chapter).',
      `${m.name}: density ${m.densityGPerCm3} g/cm³, heat of gasification ${m.heatOfGasificationJPerG} J/g, efficiency η = ${m.efficiency} (calibrated by an admin).`,
      `Kerf ${kerf} mm; line energy = P / v.`,
      `Within reach means the estimated speed stays at or above ${MIN_PRACTICAL_SPEED_MM_S} mm/s${m.maxCutMm != null ? ` and the thickness is at most ${m.maxCutMm} mm` : ''} (common practice).`,
      'One full-power pass with air assist and a clean lens in focus; worn tubes, dirty optics and knots or glue lines in wood slow it down.',
    ],
  };
}
