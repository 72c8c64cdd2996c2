/**
 * Beam hazard figures of a CO2 laser (pure; no I/O): maximum permissible exposure (MPE), nominal ocular hazard
 * distances (direct beam, focused beam, diffuse reflection), eyewear optical density, laser class and photon
 * energy. Each figure carries its formula and the published source it comes from, so the hazard sheet can
 * show them. Estimates only: the local laser safety officer and local rules take precedence.
 */

/** CODATA 2018 exact constants. */
export const PLANCK_J_S = 6.62607015e-34;
export const LIGHT_SPEED_M_S = 299_792_458;
export const ELEMENTARY_CHARGE_C = 1.602176634e-19;

/** Default exposure for unintended far-infrared exposure (ANSI Z136.1). */
export const DEFAULT_EXPOSURE_S = 10;
/** Limiting aperture for the eye at 1.4 µm–100 µm and t ≥ 10 s. */
export const LIMITING_APERTURE_CM = 0.35;

/**
 * Limiting aperture D_f for the eye at 1.4 µm–100 µm by exposure duration (ANSI Z136.1 / IEC 60825-1, from
 * memory; REFERENCE.md): 1 mm for t ≤ 0.3 s, 1.5·t^0.375 mm for 0.3 s < t < 10 s, 3.5 mm for t ≥ 10 s. In cm.
 */
export function limitingApertureCm(t: number): number {
  if (t <= 0.3) return 0.1;
  if (t < 10) return 0.15 * t ** 0.375;
  return LIMITING_APERTURE_CM;
}

/** Beam diameters in the formulas are 1/e figures; makers usually quote 1/e²: d(1/e) = d(1/e²) / √2. */
export function diameterOneOverE(d1e2: number): number {
  return d1e2 / Math.SQRT2;
}

export const SOURCES = {
  mpe: 'ANSI Z136.1 eye MPE table; IEC 60825-1 Annex A; EU Directive 2006/25/EC Annex II (1.4 µm–1 mm band)',
  nohd: 'ANSI Z136.1 hazard-evaluation appendix (NOHD for direct, focused and diffusely reflected beams)',
  od: 'ANSI Z136.1 (optical density of eyewear, OD = log10(E0/MPE) over the limiting aperture), from memory',
  odExit: 'ANSI Z136.1 (eyewear OD, exit beam wider than the limiting aperture: averaged over the beam), from memory',
  odWhole: 'ANSI Z136.1 (eyewear OD, beam narrower than the limiting aperture, e.g. after the focusing lens: the whole beam enters it), from memory',
  aperture: 'ANSI Z136.1 / IEC 60825-1 limiting aperture, 1.4–100 µm: 1 mm to 0.3 s, 1.5·t^0.375 mm to 10 s, 3.5 mm from 10 s (from memory)',
  laserClass: 'IEC 60825-1 and US 21 CFR 1040.10 (CW above 0.5 W is Class 4)',
  photon: 'CODATA 2018 exact constants h, c, e',
} as const;

export interface HazardInput {
  powerW: number;
  wavelengthUm: number;
  beamDiameterMm: number;
  divergenceMrad: number;
  lensFocalMm: number;
  exposureS?: number;
  /** Reflectance of a diffuse surface for the diffuse-reflection distance (1 = worst case). */
  diffuseReflectance?: number;
  /** Viewing angle from the surface normal, degrees (0 = worst case). */
  viewingAngleDeg?: number;
}

/** The accepted ranges; outside them the tool refuses (HazardInputError) rather than answer nonsense. */
export const HAZARD_LIMITS = {
  powerW: { min: 0, max: 10_000, exclusiveMin: true },
  beamDiameterMm: { min: 0, max: 100, exclusiveMin: true },
  divergenceMrad: { min: 0, max: 200, exclusiveMin: true },
  lensFocalMm: { min: 0, max: 2000, exclusiveMin: true },
  exposureS: { min: 1e-9, max: 3e4, exclusiveMin: false },
} as const;

/** The two CO2 emission bands, in µm (the 9.4 µm and 10.4 µm bands). */
export const CO2_BANDS_UM: ReadonlyArray<readonly [number, number]> = [
  [9.1, 9.9],
  [10.0, 11.0],
];

export function inCo2Band(um: number): boolean {
  return CO2_BANDS_UM.some(([lo, hi]) => um >= lo && um <= hi);
}

export class HazardInputError extends Error {
  constructor(public readonly field: string, message: string) {
    super(message);
    this.name = 'HazardInputError';
  }
}

export type MpeKind = 'radiant_exposure' | 'irradiance';

export interface Mpe {
  kind: MpeKind;
  /** J/cm² when kind is radiant_exposure, W/cm² when irradiance. */
  value: number;
  /** The MPE as an average irradiance over the exposure, W/cm² (for distances and OD). */
  irradianceWPerCm2: number;
  formula: string;
}

/**
 * MPE for the eye (cornea) and skin, 1.4 µm–1 mm, small source:
 * 1e-9 ≤ t < 1e-7 s: H = 0.01 J/cm²; 1e-7 ≤ t < 10 s: H = 0.56·t^0.25 J/cm²; 10 ≤ t ≤ 3e4 s: E = 0.1 W/cm².
 */
export function mpeFarInfrared(t: number): Mpe {
  if (!(t >= 1e-9 && t <= 3e4)) throw new HazardInputError('exposureS', 'The exposure duration must be between 1e-9 s and 30 000 s.');
  if (t < 1e-7) return { kind: 'radiant_exposure', value: 0.01, irradianceWPerCm2: 0.01 / t, formula: 'H = 0.01 J/cm²' };
  if (t < 10) {
    const h = 0.56 * t ** 0.25;
    return { kind: 'radiant_exposure', value: h, irradianceWPerCm2: h / t, formula: 'H = 0.56 · t^0.25 J/cm²' };
  }
  return { kind: 'irradiance', value: 0.1, irradianceWPerCm2: 0.1, formula: 'E = 0.1 W/cm²' };
}

/** Photon energy in eV: E = h·c / λ, divided by e. */
export function photonEnergyEv(wavelengthUm: number): number {
  return (PLANCK_J_S * LIGHT_SPEED_M_S) / (wavelengthUm * 1e-6) / ELEMENTARY_CHARGE_C;
}

/** √(4P / (π·MPE)) in cm: the diameter at which the beam's mean irradiance equals the MPE. */
function mpeDiameterCm(powerW: number, mpeWPerCm2: number): number {
  return Math.sqrt((4 * powerW) / (Math.PI * mpeWPerCm2));
}

/** Direct beam: NOHD = (1/φ)·(√(4P/(π·MPE)) − a), in cm; 0 when the exit beam is already below the MPE. */
export function nohdDirectCm(powerW: number, mpeWPerCm2: number, exitDiameterCm: number, divergenceRad: number): number {
  return Math.max(0, (mpeDiameterCm(powerW, mpeWPerCm2) - exitDiameterCm) / divergenceRad);
}

/** Beam after a focusing lens: NOHD ≈ (f/b0)·√(4P/(π·MPE)), in the unit of f (cm here). */
export function nohdFocusedCm(powerW: number, mpeWPerCm2: number, focalCm: number, lensBeamDiameterCm: number): number {
  return (focalCm / lensBeamDiameterCm) * mpeDiameterCm(powerW, mpeWPerCm2);
}

/** Diffuse reflection: r = √(ρ·P·cosθ / (π·MPE)), in cm. */
export function diffuseHazardCm(powerW: number, mpeWPerCm2: number, reflectance = 1, viewingAngleDeg = 0): number {
  const cos = Math.cos((viewingAngleDeg * Math.PI) / 180);
  return Math.sqrt((reflectance * powerW * Math.max(0, cos)) / (Math.PI * mpeWPerCm2));
}

/**
 * OD = log10(E0/MPE), E0 = P/(π·d²/4), with d the larger of the beam and the limiting aperture (a beam narrower
 * than the aperture puts all its power into it). Not rounded. `apertureCm` defaults to 3.5 mm (t ≥ 10 s).
 */
export function opticalDensityExact(powerW: number, mpeWPerCm2: number, beamDiameterCm: number, apertureCm = LIMITING_APERTURE_CM): number {
  const d = Math.max(beamDiameterCm, apertureCm);
  const e0 = powerW / ((Math.PI * d * d) / 4);
  return Math.log10(e0 / mpeWPerCm2);
}

/** Rounds an exact OD up to the whole number to wear; 0 when the beam is already below the MPE. */
export function roundOd(exact: number): number {
  // a hair of tolerance so that an exact integer (e.g. 2.0000000000004) is not pushed up a step by rounding noise
  return Math.max(0, Math.ceil(exact - 1e-9));
}

/** Eyewear OD rounded up to a whole number; 0 when the beam is already below the MPE. */
export function opticalDensity(powerW: number, mpeWPerCm2: number, beamDiameterCm: number, apertureCm = LIMITING_APERTURE_CM): number {
  return roundOd(opticalDensityExact(powerW, mpeWPerCm2, beamDiameterCm, apertureCm));
}

/** The beam cases a person can meet (the focused one while servicing with the enclosure open). */
export type OdCase = 'exit_beam' | 'focused_beam';

export const OD_CASE_TEXT: Record<OdCase, string> = {
  exit_beam: 'the raw beam leaving the tube',
  focused_beam: 'the beam after the focusing lens (narrower than the limiting aperture, so all of it enters the eye)',
};

export interface OdCaseFigure {
  case: OdCase;
  exact: number;
  /** The diameter the power is spread over, cm. */
  averagedOverCm: number;
}

/**
 * Every accessible beam case: the exit beam (averaged over the larger of the beam and the aperture) and the
 * focused beam (narrower than the aperture near the focus: the whole beam in the aperture). The worst governs.
 */
export function opticalDensityCases(powerW: number, mpeWPerCm2: number, exitDiameterCm: number, apertureCm: number): { cases: OdCaseFigure[]; governing: OdCaseFigure } {
  const cases: OdCaseFigure[] = [
    { case: 'exit_beam', exact: opticalDensityExact(powerW, mpeWPerCm2, exitDiameterCm, apertureCm), averagedOverCm: Math.max(exitDiameterCm, apertureCm) },
    { case: 'focused_beam', exact: opticalDensityExact(powerW, mpeWPerCm2, 0, apertureCm), averagedOverCm: apertureCm },
  ];
  // on a tie (an exit beam already narrower than the aperture) the exit beam is named: it is met first
  const governing = cases.reduce((a, b) => (b.exact > a.exact + 1e-12 ? b : a));
  return { cases, governing };
}

export type LaserClass = '1' | '3R' | '3B' | '4';

/**
 * Class of the bare CW beam at 1.4 µm–1 mm. Above 0.5 W is Class 4 (IEC 60825-1; 21 CFR 1040.10). The lower
 * limits (Class 1 up to 10 mW, Class 3R up to five times that) are recalled from IEC 60825-1, not re-read.
 */
export function laserClass(powerW: number): LaserClass {
  if (powerW > 0.5) return '4';
  if (powerW > 0.05) return '3B';
  if (powerW > 0.01) return '3R';
  return '1';
}

export interface HazardFigure {
  key: string;
  label: string;
  value: number | string;
  unit: string;
  formula: string;
  source: string;
}

export interface HazardSheet {
  mpeWPerCm2?: number;
  mpeJPerCm2?: number;
  nohdDirectM: number;
  nohdFocusedM: number;
  diffuseHazardM: number;
  opticalDensity: number;
  /** The unrounded OD of the governing case. */
  opticalDensityExact: number;
  /** Which beam case governs the OD. */
  odCase: OdCase;
  odCases: OdCaseFigure[];
  /** Limiting aperture used for the OD, mm. */
  limitingApertureMm: number;
  laserClass: LaserClass;
  photonEnergyEv: number;
  exposureS: number;
  figures: HazardFigure[];
  sources: string[];
}

function check(field: keyof typeof HAZARD_LIMITS, value: number, label: string): void {
  const l = HAZARD_LIMITS[field];
  const low = l.exclusiveMin ? value <= l.min : value < l.min;
  if (!Number.isFinite(value) || low || value > l.max) {
    throw new HazardInputError(field, `${label} must be ${l.exclusiveMin ? 'above' : 'at least'} ${l.min} and at most ${l.max}.`);
  }
}

export function validateHazardInput(i: HazardInput): void {
  check('powerW', i.powerW, 'Power (W)');
  if (!Number.isFinite(i.wavelengthUm) || !inCo2Band(i.wavelengthUm)) {
    throw new HazardInputError('wavelengthUm', 'The wavelength must lie in a CO2 band: 9.1–9.9 µm or 10.0–11.0 µm.');
  }
  check('beamDiameterMm', i.beamDiameterMm, 'Beam diameter (mm)');
  check('divergenceMrad', i.divergenceMrad, 'Divergence (mrad)');
  check('lensFocalMm', i.lensFocalMm, 'Lens focal length (mm)');
  if (i.exposureS !== undefined) check('exposureS', i.exposureS, 'Exposure duration (s)');
  if (i.diffuseReflectance !== undefined && !(i.diffuseReflectance > 0 && i.diffuseReflectance <= 1)) {
    throw new HazardInputError('diffuseReflectance', 'The reflectance must be above 0 and at most 1.');
  }
  if (i.viewingAngleDeg !== undefined && !(i.viewingAngleDeg >= 0 && i.viewingAngleDeg < 90)) {
    throw new HazardInputError('viewingAngleDeg', 'The viewing angle must be from 0° up to (not including) 90°.');
  }
}

const round = (x: number, digits: number) => Number(x.toPrecision(digits));

/** Every figure of the hazard sheet for one machine and exposure duration. */
export function hazardSheet(input: HazardInput): HazardSheet {
  validateHazardInput(input);
  const t = input.exposureS ?? DEFAULT_EXPOSURE_S;
  const mpe = mpeFarInfrared(t);
  const e = mpe.irradianceWPerCm2;
  const aCm = input.beamDiameterMm / 10;
  const phi = input.divergenceMrad / 1000;
  const fCm = input.lensFocalMm / 10;
  const direct = nohdDirectCm(input.powerW, e, aCm, phi) / 100;
  const focused = nohdFocusedCm(input.powerW, e, fCm, aCm) / 100;
  const diffuse = diffuseHazardCm(input.powerW, e, input.diffuseReflectance ?? 1, input.viewingAngleDeg ?? 0) / 100;
  const apertureCm = limitingApertureCm(t);
  const odc = opticalDensityCases(input.powerW, e, aCm, apertureCm);
  const od = roundOd(odc.governing.exact);
  const apMm = round(apertureCm * 10, 3);
  const exitCase = odc.cases.find((c) => c.case === 'exit_beam')!;
  const wholeCase = odc.cases.find((c) => c.case === 'focused_beam')!;
  const cls = laserClass(input.powerW);
  const photon = photonEnergyEv(input.wavelengthUm);
  const mpeUnit = mpe.kind === 'irradiance' ? 'W/cm²' : 'J/cm²';
  const figures: HazardFigure[] = [
    { key: 'mpe', label: `Maximum permissible exposure (eye, ${t} s)`, value: round(mpe.value, 4), unit: mpeUnit, formula: mpe.formula, source: SOURCES.mpe },
    { key: 'nohdDirect', label: 'Nominal ocular hazard distance, direct beam', value: round(direct, 4), unit: 'm', formula: 'NOHD = (1/φ) · (√(4P / (π·MPE)) − a)', source: SOURCES.nohd },
    { key: 'nohdFocused', label: 'Nominal ocular hazard distance, after the focusing lens', value: round(focused, 4), unit: 'm', formula: 'NOHD ≈ (f / b0) · √(4P / (π·MPE))', source: SOURCES.nohd },
    { key: 'diffuse', label: 'Hazard distance, diffuse reflection (ρ = 1, viewed head-on)', value: round(diffuse, 4), unit: 'm', formula: 'r = √(ρ · P · cos θ / (π·MPE))', source: SOURCES.nohd },
    { key: 'aperture', label: `Limiting aperture of the eye for a ${t} s exposure`, value: apMm, unit: 'mm', formula: 'D_f = 1 mm (t ≤ 0.3 s); 1.5 · t^0.375 mm (0.3 s < t < 10 s); 3.5 mm (t ≥ 10 s)', source: SOURCES.aperture },
    { key: 'odExit', label: 'Optical density, raw exit beam', value: round(exitCase.exact, 4), unit: 'OD (exact)', formula: `log10(E0 / MPE), E0 = P / (π d² / 4), d = max(a, D_f) = ${round(exitCase.averagedOverCm * 10, 3)} mm`, source: SOURCES.odExit },
    { key: 'odWhole', label: 'Optical density, beam after the focusing lens (whole beam in the aperture)', value: round(wholeCase.exact, 4), unit: 'OD (exact)', formula: `log10(E0 / MPE), E0 = P / (π D_f² / 4), D_f = ${apMm} mm`, source: SOURCES.odWhole },
    { key: 'od', label: `Eyewear optical density needed at this wavelength (governed by ${OD_CASE_TEXT[odc.governing.case]})`, value: od, unit: 'OD', formula: 'OD = ⌈max over the beam cases of log10(E0 / MPE)⌉', source: SOURCES.od },
    { key: 'class', label: 'Laser class of the bare beam', value: cls, unit: '', formula: 'CW output above 0.5 W → Class 4', source: SOURCES.laserClass },
    { key: 'photon', label: 'Photon energy', value: round(photon, 4), unit: 'eV', formula: 'E = h·c / λ', source: SOURCES.photon },
  ];
  return {
    ...(mpe.kind === 'irradiance' ? { mpeWPerCm2: mpe.value } : { mpeJPerCm2: round(mpe.value, 6) }),
    nohdDirectM: round(direct, 6),
    nohdFocusedM: round(focused, 6),
    diffuseHazardM: round(diffuse, 6),
    opticalDensity: od,
    opticalDensityExact: round(odc.governing.exact, 6),
    odCase: odc.governing.case,
    odCases: odc.cases.map((c) => ({ ...c, exact: round(c.exact, 6), averagedOverCm: round(c.averagedOverCm, 6) })),
    limitingApertureMm: apMm,
    laserClass: cls,
    photonEnergyEv: round(photon, 6),
    exposureS: t,
    figures,
    sources: Object.values(SOURCES),
  };
}

/** The standing cautions printed on every hazard sheet. */
export const HAZARD_CAUTIONS: readonly string[] = [
  'The cutter is a Class 1 product only while its enclosure and interlocks are intact; the laser inside is Class 4. Never defeat an interlock.',
  'Only authorised people service the machine with the enclosure open, and Class 4 controls apply while they do.',
  'Eyewear must be rated for the wavelength (far infrared, 9–11 µm) and at least the optical density on this sheet; ordinary glasses are not enough.',
  'Never leave a running job; keep a CO2 extinguisher at hand and the extraction running.',
  'These figures are estimates from published formulas. The local laser safety officer, local rules and the manufacturer\'s manual take precedence.',
];
