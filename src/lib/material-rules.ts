/**
 * Material rules (pure; no I/O): the vocabulary, and the decision whether a declared material may go under
 * the beam of one machine, in one mode, at one thickness. The server (src/lib/server/materials.ts) loads the
 * rows and turns a refusal into a 422; the booking form uses the same decision to show the rule as the
 * member picks.
 */
import { DEFAULT_KERF_MM, reachMm, type CutMaterial } from './cut-estimate';

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
  /** The thickest cut allowed on this machine, mm (null: no limit could be set). */
  maxCutMm: number | null;
  /** Where the limit comes from. */
  maxCutBasis: 'override' | 'material' | 'power' | 'none';
}

function cutMaterial(m: RuleMaterial): CutMaterial | null {
  if (m.densityGPerCm3 == null || m.heatOfGasificationJPerG == null || m.cutEfficiency == null) return null;
  if (!(m.densityGPerCm3 > 0 && m.heatOfGasificationJPerG > 0 && m.cutEfficiency > 0)) return null;
  return { name: m.name, densityGPerCm3: m.densityGPerCm3, heatOfGasificationJPerG: m.heatOfGasificationJPerG, efficiency: m.cutEfficiency };
}

/** The rule that applies to `material` on `machine`, with its per-machine override merged in. */
export function effectiveRule(material: RuleMaterial, machine: RuleMachine, override?: RuleOverride | null): EffectiveRule {
  const rule = override?.rule ?? material.rule;
  const modes = override?.modes ?? material.modes;
  const reason = override?.note ? `${material.reason} On ${machine.name}: ${override.note}` : material.reason;
  let maxCutMm: number | null = null;
  let maxCutBasis: EffectiveRule['maxCutBasis'] = 'none';
  if (override?.maxCutMm != null) {
    maxCutMm = override.maxCutMm;
    maxCutBasis = 'override';
  } else {
    const cm = cutMaterial(material);
    const derived = cm ? Math.floor(reachMm(cm, machine.powerW, DEFAULT_KERF_MM) * 10) / 10 : null;
    if (material.maxCutMm != null && (derived == null || material.maxCutMm <= derived)) {
      maxCutMm = material.maxCutMm;
      maxCutBasis = 'material';
    } else if (derived != null) {
      maxCutMm = derived;
      maxCutBasis = 'power';
    }
  }
  return { rule, reason, modes: [...modes], maxCutMm, maxCutBasis };
}

export interface Declared {
  mode: MaterialMode;
  thicknessMm: number;
}

export type Decision =
  | { ok: true; rule: MaterialRule; effective: EffectiveRule }
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
      message: `${material.name} ${declared.thicknessMm} mm is thicker than ${machine.name} may cut (at most ${effective.maxCutMm} mm).`,
      effective,
    };
  }
  return { ok: true, rule: effective.rule, effective };
}
