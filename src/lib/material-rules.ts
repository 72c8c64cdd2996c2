/**
 * Material rules (pure; no I/O): the vocabulary, and the decision whether a declared material may go under
 * the beam of one machine, in one mode, at one thickness. The server (src/lib/server/materials.ts) loads the
 * rows and turns a refusal into a 422; the booking form uses the same decision to show the rule as the
 * member picks.
 */
import { DEFAULT_KERF_MM, reachMm, type CutMaterial } from './cut-estimate';
import { screenMaterial, type Halogen, type ScreenResult } from './halogen-screen';

export const MATERIAL_RULES = ['allowed', 'limited', 'blocked'] as const;
export type MaterialRule = (typeof MATERIAL_RULES)[number];

export const MATERIAL_MODES = ['cut', 'engrave', 'score'] as const;
export type MaterialMode = (typeof MATERIAL_MODES)[number];

export const MATERIAL_CATEGORIES = ['plastic', 'wood', 'paper', 'textile', 'leather', 'metal', 'mineral', 'foam', 'composite', 'rubber', 'other'] as const;
export type MaterialCategory = (typeof MATERIAL_CATEGORIES)[number];

export const RULE_TEXT: Record<MaterialRule, { label: string; tone: 'ok' | 'warn' | 'stop'; icon: string }> = {
  allowed: { label: 'Allowed', tone: 'ok', icon: '●' },
  limited: { label: 'Limited', tone: 'warn', icon: '▲' },
  blocked: { label: 'Blocked', tone: 'stop', icon: '■' },
};

/** What the decision needs of a material (a subset of the catalogue row). */
export interface RuleMaterial {
  id: string;
  name: string;
  /** Formulas of the composition (may be empty). */
  composition: readonly string[];
  rule: MaterialRule;
  reason: string;
  modes: MaterialMode[];
  /** Explicit cap for cutting, any machine (mm); null → derived from the machine's power when possible. */
  maxCutMm: number | null;
  densityGPerCm3: number | null;
  heatOfGasificationJPerG: number | null;
  cutEfficiency: number | null;
}

/** A per-machine override: any field not null replaces the material's own. */
export interface RuleOverride {
  rule: MaterialRule | null;
  modes: MaterialMode[] | null;
  maxCutMm: number | null;
  note: string | null;
}

export interface RuleMachine {
  id: string;
  name: string;
  powerW: number;
}

export interface EffectiveRule {
  rule: MaterialRule;
  reason: string;
  modes: MaterialMode[];
  /** The thickest cut the rule allows on this machine, mm (null: the rule sets no limit). Thicker is refused. */
  maxCutMm: number | null;
  /** Where the limit comes from. */
  maxCutBasis: 'override' | 'material' | 'none';
  /** How thick the estimate says this machine cuts in one pass, mm (advice: thicker is a warning, not a refusal). */
  reachMm: number | null;
  /** Blocked because its composition or name carries a halogen, whatever the stored rule says. */
  halogenBlocked: boolean;
}

export interface HalogenFinding {
  halogens: Halogen[];
  reason: string;
  matchedName?: string;
}

const findings = new Map<string, HalogenFinding | null>();

/**
 * The halogen rule: does this material's composition or recognised name carry F, Cl, Br or I? A formula that
 * cannot be read is skipped here (writes refuse it separately); the name is still read.
 */
export function halogenFinding(m: { name: string; composition: readonly string[] }): HalogenFinding | null {
  const key = JSON.stringify([m.name, m.composition]);
  if (findings.has(key)) return findings.get(key)!;
  let r: ScreenResult | null = null;
  try {
    r = screenMaterial({ name: m.name, composition: m.composition });
  } catch {
    try {
      r = screenMaterial({ name: m.name });
    } catch {
      r = null;
    }
  }
  const f = r && r.halogens.length ? { halogens: r.halogens, reason: r.reason, ...(r.matchedName ? { matchedName: r.matchedName } : {}) } : null;
  if (findings.size > 2000) findings.clear();
  findings.set(key, f);
  return f;
}

/** The rule members see for a catalogue entry: its stored rule, or blocked when it breaks the halogen rule. */
export function catalogueRule(m: { name: string; composition: readonly string[]; rule: MaterialRule; reason: string; modes: readonly MaterialMode[] }): { rule: MaterialRule; reason: string; modes: MaterialMode[]; halogenBlocked: boolean } {
  const f = m.rule === 'blocked' ? null : halogenFinding(m);
  if (f) return { rule: 'blocked', reason: `${HALOGEN_HOLD} ${f.reason}`, modes: [], halogenBlocked: true };
  return { rule: m.rule, reason: m.reason, modes: [...m.modes], halogenBlocked: false };
}

export const HALOGEN_HOLD = 'Blocked by the halogen rule until an admin corrects this entry.';

function cutMaterial(m: RuleMaterial): CutMaterial | null {
  if (m.densityGPerCm3 == null || m.heatOfGasificationJPerG == null || m.cutEfficiency == null) return null;
  if (!(m.densityGPerCm3 > 0 && m.heatOfGasificationJPerG > 0 && m.cutEfficiency > 0)) return null;
  return { name: m.name, densityGPerCm3: m.densityGPerCm3, heatOfGasificationJPerG: m.heatOfGasificationJPerG, efficiency: m.cutEfficiency };
}

/** The rule that applies to `material` on `machine`, with its per-machine override merged in. */
export function effectiveRule(material: RuleMaterial, machine: RuleMachine, override?: RuleOverride | null): EffectiveRule {
  let rule = override?.rule ?? material.rule;
  let modes = override?.modes ?? material.modes;
  let reason = override?.note ? `${material.reason} On ${machine.name}: ${override.note}` : material.reason;
  let halogenBlocked = false;
  if (rule !== 'blocked') {
    const f = halogenFinding(material);
    if (f) {
      rule = 'blocked';
      modes = [];
      reason = `${HALOGEN_HOLD} ${f.reason}`;
      halogenBlocked = true;
    }
  }
  let maxCutMm: number | null = null;
  let maxCutBasis: EffectiveRule['maxCutBasis'] = 'none';
  if (override?.maxCutMm != null) {
    maxCutMm = override.maxCutMm;
    maxCutBasis = 'override';
  } else if (material.maxCutMm != null) {
    maxCutMm = material.maxCutMm;
    maxCutBasis = 'material';
  }
  const cm = cutMaterial(material);
  const reach = cm ? Math.floor(reachMm(cm, machine.powerW, DEFAULT_KERF_MM) * 10) / 10 : null;
  return { rule, reason, modes: [...modes], maxCutMm, maxCutBasis, reachMm: reach, halogenBlocked };
}

export interface Declared {
  mode: MaterialMode;
  thicknessMm: number;
}

export type Decision =
  | { ok: true; rule: MaterialRule; effective: EffectiveRule; warnings: string[] }
  | { ok: false; code: 'material_blocked' | 'material_limited'; message: string; effective: EffectiveRule };

const MODE_VERB: Record<MaterialMode, string> = { cut: 'cutting', engrave: 'engraving', score: 'scoring' };

function listModes(modes: readonly MaterialMode[]): string {
  return modes.length ? modes.map((m) => MODE_VERB[m]).join(', ') : 'nothing';
}

/** May `material` be used on `machine` as declared? Blocked → material_blocked; outside modes or thickness → material_limited. */
export function decide(material: RuleMaterial, machine: RuleMachine, declared: Declared, override?: RuleOverride | null): Decision {
  const effective = effectiveRule(material, machine, override);
  if (effective.rule === 'blocked') {
    return { ok: false, code: 'material_blocked', message: `${material.name} is blocked on ${machine.name}: ${effective.reason}`, effective };
  }
  if (!effective.modes.includes(declared.mode)) {
    return {
      ok: false,
      code: 'material_limited',
      message: `${material.name} may not be used for ${MODE_VERB[declared.mode]} on ${machine.name}; allowed: ${listModes(effective.modes)}. ${effective.reason}`,
      effective,
    };
  }
  if (declared.mode === 'cut' && effective.maxCutMm != null && declared.thicknessMm > effective.maxCutMm + 1e-9) {
    return {
      ok: false,
      code: 'material_limited',
      message: `${material.name} ${declared.thicknessMm} mm is thicker than the rule allows on ${machine.name} (at most ${effective.maxCutMm} mm).`,
      effective,
    };
  }
  const warnings: string[] = [];
  if (declared.mode === 'cut' && effective.reachMm != null && declared.thicknessMm > effective.reachMm + 1e-9) {
    warnings.push(
      `${material.name} ${declared.thicknessMm} mm is beyond what the estimate says ${machine.name} (${machine.powerW} W) cuts in one pass (about ${effective.reachMm} mm): expect several passes or a test cut that does not go through. Advice only.`,
    );
  }
  return { ok: true, rule: effective.rule, effective, warnings };
}
