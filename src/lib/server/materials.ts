/**
 * Materials: all SQL of the catalogue, its per-machine overrides, the booking check and the estimate inputs.
 * Every change to a rule is written to the audit log in the same transaction.
 */
import type { Knex } from 'knex';
import { db, pgCode, PG, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { getMachine, listMachines, type Machine } from './machines';
import { sheetCodesFrom, versionAt } from './prices';
import {
  catalogueRule, decide, effectiveRule, halogenFinding, type EffectiveRule, type MaterialCategory, type MaterialMode,
  type MaterialRule, type RuleMaterial, type RuleOverride,
} from '@lib/material-rules';
import { CutInputError, estimateCut, type CutEstimate } from '@lib/cut-estimate';
import { FormulaError, screenComposition, screenMaterial } from '@lib/halogen-screen';

export interface Material extends RuleMaterial {
  category: MaterialCategory;
  composition: string[];
  /** True when the stored rule is allowed or limited but the composition or name carries a halogen: treated as blocked. */
  halogenHeld?: boolean;
  soldBySpace: boolean;
  /** The sheet's code in the price version's sheet list (Pricing): the one source of its price. */
  sheetSku: string | null;
  /** Read from the price version in force (null when the sheet is not in it); the material keeps no price of its own. */
  sheetPriceMinor: number | null;
  /** The sheet's name and currency in that price version. */
  sheetName: string | null;
  sheetCurrency: string | null;
  sheetSize: string | null;
  updatedAt: Date;
}

export interface MaterialOverride extends RuleOverride {
  materialId: string;
  machineId: string;
}

type Row = {
  id: string; name: string; category: MaterialCategory; composition: string[]; rule: MaterialRule; reason: string;
  modes: MaterialMode[]; max_cut_mm: number | null; density_g_cm3: number | null; heat_gasification_j_g: number | null;
  cut_efficiency: number | null; sold_by_space: boolean; sheet_sku: string | null; sheet_size: string | null;
  updated_at: Date;
};
type OverrideRow = { material_id: string; machine_id: string; rule: MaterialRule | null; modes: MaterialMode[] | null; max_cut_mm: number | null; note: string | null };

const num = (v: unknown) => (v === null || v === undefined ? null : Number(v));

function toMaterial(r: Row): Material {
  return {
    id: r.id, name: r.name, category: r.category, composition: r.composition ?? [], rule: r.rule, reason: r.reason,
    modes: r.modes ?? [], maxCutMm: num(r.max_cut_mm), densityGPerCm3: num(r.density_g_cm3),
    heatOfGasificationJPerG: num(r.heat_gasification_j_g), cutEfficiency: num(r.cut_efficiency),
    soldBySpace: r.sold_by_space, sheetSku: r.sheet_sku, sheetPriceMinor: null, sheetName: null, sheetCurrency: null, sheetSize: r.sheet_size,
    updatedAt: r.updated_at,
  };
}

function toOverride(r: OverrideRow): MaterialOverride {
  return { materialId: r.material_id, machineId: r.machine_id, rule: r.rule, modes: r.modes, maxCutMm: num(r.max_cut_mm), note: r.note };
}

export type SheetPrice = { sku: string; name: string; priceMinor: number; currency: string };

/** The sheets of the price version in force at `at`, by code (empty when no version is in force). */
export async function sheetsInForce(at = new Date(), trx: Conn = db()): Promise<Map<string, SheetPrice>> {
  const v = await versionAt(at, trx);
  return new Map((v?.materials ?? []).map((m) => [m.sku, { sku: m.sku, name: m.name, priceMinor: m.priceMinor, currency: v!.currency }]));
}

function priced(m: Material, sheets: Map<string, SheetPrice>): Material {
  const s = m.sheetSku ? sheets.get(m.sheetSku) : undefined;
  return { ...m, sheetPriceMinor: s?.priceMinor ?? null, sheetName: s?.name ?? null, sheetCurrency: s?.currency ?? null };
}

/** The catalogue, each sold material priced by the price version in force at `at` (default now). */
export async function listMaterials(trx: Conn = db(), at = new Date()): Promise<Material[]> {
  const [rows, sheets] = await Promise.all([trx('materials').orderByRaw('lower(name)') as Promise<Row[]>, sheetsInForce(at, trx)]);
  return rows.map((r) => priced(toMaterial(r), sheets));
}

export async function getMaterial(id: string, trx: Conn = db()): Promise<Material | null> {
  const row = (await trx('materials').where({ id }).first()) as Row | undefined;
  return row ? priced(toMaterial(row), await sheetsInForce(new Date(), trx)) : null;
}

export async function listOverrides(trx: Conn = db()): Promise<MaterialOverride[]> {
  return ((await trx('material_machine_overrides').select('*')) as OverrideRow[]).map(toOverride);
}

/** The shape of GET /api/materials: an entry that breaks the halogen rule is shown as blocked until it is fixed. */
export function materialSummary(m: Material) {
  const c = catalogueRule(m);
  return { id: m.id, name: m.name, category: m.category, rule: c.rule, reason: c.reason, modes: c.modes, composition: m.composition };
}

const HALOGEN_NAMES: Record<string, string> = { F: 'fluorine', Cl: 'chlorine', Br: 'bromine', I: 'iodine' };

/**
 * The one halogen rule for every write (material create and update, per-machine override, request approval):
 * every formula must be readable; a material or override that is `allowed` or `limited` while the composition or
 * the recognised name carries F, Cl, Br or I → 422 halogen_not_allowed; a material with no composition and no
 * recognised name can only be blocked (→ 422 composition_required). `rule` is the rule being written (for an
 * override, the rule it results in on that machine).
 */
export function assertHalogenRule(m: { name: string; composition: readonly string[] }, rule: MaterialRule, target: 'material' | 'override' = 'material'): void {
  for (const [i, f] of m.composition.entries()) {
    try {
      screenComposition(f);
    } catch (err) {
      if (err instanceof FormulaError) throw new DomainError('invalid', 'invalid_formula', err.message, { [`composition.${i}`]: err.message, composition: err.message });
      throw err;
    }
  }
  if (rule === 'blocked') return;
  const finding = halogenFinding(m);
  if (finding) {
    const elements = finding.halogens.map((h) => `${HALOGEN_NAMES[h] ?? h} (${h})`).join(', ');
    const via = m.composition.length && screenComposition(m.composition).halogens.length ? 'its composition' : `its name${finding.matchedName ? ` (read as ${finding.matchedName})` : ''}`;
    const message = `${m.name} carries ${elements} by ${via}, so it can only be blocked, not ${rule}. ${finding.reason}`;
    const fields: Record<string, string> = { rule: `Only "blocked" is possible: it carries ${elements}.` };
    if (target === 'material') fields.composition = `Carries ${elements}.`;
    throw new DomainError('invalid', 'halogen_not_allowed', message, fields);
  }
  if (target === 'material' && m.composition.length === 0 && !screenMaterial({ name: m.name }).matchedName) {
    throw new DomainError('invalid', 'composition_required', `${m.name} has no composition and is not a name we recognise: give the formula from the safety data sheet, or block it until a steward has reviewed it.`, {
      composition: 'Give at least one formula, or block the material.',
    });
  }
}

/** Catalogue entries whose stored rule breaks the halogen rule (shown to the admin; treated as blocked). */
export function halogenViolations(materials: Material[], overrides: MaterialOverride[]) {
  const out: { materialId: string; name: string; machineId: string | null; storedRule: MaterialRule; reason: string }[] = [];
  for (const m of materials) {
    const f = halogenFinding(m);
    if (!f) continue;
    if (m.rule !== 'blocked') out.push({ materialId: m.id, name: m.name, machineId: null, storedRule: m.rule, reason: f.reason });
    for (const o of overrides) if (o.materialId === m.id && o.rule && o.rule !== 'blocked') out.push({ materialId: m.id, name: m.name, machineId: o.machineId, storedRule: o.rule, reason: f.reason });
  }
  return out;
}

/** What an admin sends to add or change a material: the rule fields of RuleMaterial, its category and the sheet. */
export interface MaterialInput extends Omit<RuleMaterial, 'id' | 'composition'> {
  category: MaterialCategory;
  composition: string[];
  soldBySpace: boolean;
  sheetSku?: string | null;
  /** Accepted for older callers only when null or equal to the price in force: sheet prices are set on Pricing. */
  sheetPriceMinor?: number | null;
  sheetSize: string | null;
}

function toRow(i: MaterialInput) {
  return {
    name: i.name, category: i.category, composition: i.composition, rule: i.rule, reason: i.reason,
    modes: i.rule === 'blocked' ? [] : i.modes, max_cut_mm: i.maxCutMm, density_g_cm3: i.densityGPerCm3,
    heat_gasification_j_g: i.heatOfGasificationJPerG, cut_efficiency: i.cutEfficiency, sold_by_space: i.soldBySpace,
    sheet_sku: i.soldBySpace ? (i.sheetSku ?? null) : null, sheet_size: i.sheetSize,
  };
}

/** The material's own fields (the sheet's price, name and currency are the price version's, not the material's). */
function auditShape(m: Material) {
  const { updatedAt: _u, sheetPriceMinor: _p, sheetName: _n, sheetCurrency: _c, ...rest } = m;
  return rest;
}

/**
 * A material the space sells names a sheet of the price version in force or of a later one (422 unknown_sheet
 * otherwise); a price sent along (older callers) must be null or the price in force: prices are changed on Pricing.
 */
async function assertSheet(input: MaterialInput, trx: Conn): Promise<void> {
  if (!input.soldBySpace) return;
  if (!input.sheetSku) throw new DomainError('invalid', 'invalid', 'A material the space sells needs its sheet from the price list.', { sheetSku: 'Choose the sheet from the price list on Pricing.' });
  const now = new Date();
  if (!(await sheetCodesFrom(now, trx)).has(input.sheetSku)) {
    throw new DomainError('invalid', 'unknown_sheet', `No price version sells a sheet with the code ${input.sheetSku}: add it on Pricing first.`, { sheetSku: 'Not in the price list.' });
  }
  const s = (await sheetsInForce(now, trx)).get(input.sheetSku);
  if (input.sheetPriceMinor != null && input.sheetPriceMinor !== s?.priceMinor) {
    throw new DomainError('invalid', 'price_on_pricing', 'Sheet prices are set on the Pricing screen (a new price version), not on a material.', { sheetPriceMinor: 'Change the price on Pricing.' });
  }
}

function mapWriteError(err: unknown): never {
  if (pgCode(err) === PG.uniqueViolation) throw new DomainError('conflict', 'material_exists', 'A material with that name is already in the catalogue.', { name: 'Already in the catalogue.' });
  if (pgCode(err) === PG.checkViolation) throw new DomainError('invalid', 'invalid', 'A value is out of range.');
  throw err;
}

export async function createMaterial(actorId: string, input: MaterialInput, trx?: Knex.Transaction): Promise<Material> {
  assertHalogenRule(input, input.rule);
  const work = async (t: Knex.Transaction) => {
    await assertSheet(input, t);
    const [row] = (await t('materials').insert(toRow(input)).returning('*')) as Row[];
    const m = priced(toMaterial(row!), await sheetsInForce(new Date(), t));
    await recordAudit(t, { actorId, kind: 'material.created', subjectType: 'material', subjectId: m.id, summary: `Added ${m.name} to the catalogue as ${m.rule}`, after: auditShape(m) });
    return m;
  };
  try {
    return trx ? await work(trx) : await transaction(work);
  } catch (err) {
    mapWriteError(err);
  }
}

export async function updateMaterial(actorId: string, id: string, input: MaterialInput): Promise<Material> {
  assertHalogenRule(input, input.rule);
  try {
    return await transaction(async (t) => {
      const before = (await t('materials').where({ id }).forUpdate().first()) as Row | undefined;
      if (!before) throw new DomainError('not_found', 'not_found', 'No material has that id.');
      // an override that would now let a halogen-bearing material under the beam is refused too
      const loose = (await t('material_machine_overrides').where({ material_id: id }).whereIn('rule', ['allowed', 'limited']).first('rule')) as { rule: MaterialRule } | undefined;
      if (loose) assertHalogenRule(input, loose.rule, 'override');
      await assertSheet(input, t);
      const [row] = (await t('materials').where({ id }).update({ ...toRow(input), updated_at: t.fn.now() }).returning('*')) as Row[];
      const sheets = await sheetsInForce(new Date(), t);
      const b = priced(toMaterial(before), sheets);
      const a = priced(toMaterial(row!), sheets);
      const changed = Object.keys(auditShape(a)).filter((k) => JSON.stringify((auditShape(a) as Record<string, unknown>)[k]) !== JSON.stringify((auditShape(b) as Record<string, unknown>)[k]));
      await recordAudit(t, {
        actorId, kind: 'material.updated', subjectType: 'material', subjectId: id,
        summary: `Changed ${a.name}: ${changed.length ? changed.join(', ') : 'nothing'}${b.rule !== a.rule ? ` (rule ${b.rule} → ${a.rule})` : ''}`,
        before: auditShape(b), after: auditShape(a),
      });
      return a;
    });
  } catch (err) {
    mapWriteError(err);
  }
}

/** Sets (or, with null, removes) the override of one material on one machine. */
export async function setOverride(actorId: string, materialId: string, machineId: string, o: RuleOverride | null): Promise<MaterialOverride | null> {
  return transaction(async (t) => {
    const material = await getMaterial(materialId, t);
    if (!material) throw new DomainError('not_found', 'not_found', 'No material has that id.');
    const machine = await getMachine(machineId, t);
    if (!machine) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
    if (o) assertHalogenRule(material, o.rule ?? material.rule, 'override');
    const beforeRow = (await t('material_machine_overrides').where({ material_id: materialId, machine_id: machineId }).forUpdate().first()) as OverrideRow | undefined;
    const before = beforeRow ? toOverride(beforeRow) : null;
    let after: MaterialOverride | null = null;
    if (o === null || (o.rule === null && o.modes === null && o.maxCutMm === null && !o.note)) {
      await t('material_machine_overrides').where({ material_id: materialId, machine_id: machineId }).delete();
    } else {
      const [row] = (await t('material_machine_overrides')
        .insert({ material_id: materialId, machine_id: machineId, rule: o.rule, modes: o.modes, max_cut_mm: o.maxCutMm, note: o.note || null, updated_at: t.fn.now() })
        .onConflict(['material_id', 'machine_id'])
        .merge()
        .returning('*')) as OverrideRow[];
      after = toOverride(row!);
    }
    if (before || after) {
      await recordAudit(t, {
        actorId, kind: after ? 'material.override_set' : 'material.override_removed', subjectType: 'material', subjectId: materialId,
        summary: after ? `Set the ${material.name} rule on ${machine.name}` : `Removed the ${material.name} override on ${machine.name}`,
        before, after,
      });
    }
    return after;
  });
}

/** Each material's effective rule on each machine in use (for the Materials screen and the booking form). */
export async function rulesByMachine(at = new Date()): Promise<{ machines: Machine[]; materials: Material[]; effective: Record<string, Record<string, EffectiveRule>> }> {
  const [machines, materials, overrides] = await Promise.all([listMachines(), listMaterials(db(), at), listOverrides()]);
  const effective: Record<string, Record<string, EffectiveRule>> = {};
  for (const m of materials) {
    effective[m.id] = {};
    for (const machine of machines) {
      const o = overrides.find((x) => x.materialId === m.id && x.machineId === machine.id);
      effective[m.id]![machine.id] = effectiveRule(m, machine, o);
    }
  }
  return { machines, materials, effective };
}

export interface DeclaredMaterial {
  materialId: string;
  thicknessMm: number;
  mode: 'cut' | 'engrave' | 'score';
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/**
 * The booking check: every declared material must be allowed on `machineId` in its mode and thickness.
 * Throws DomainError 422 `material_blocked` (naming the material and the reason), 422 `material_limited` (mode not
 * allowed, or thicker than the machine may cut, per-machine overrides included), 422 `invalid` for an unknown
 * material id or a thickness out of range, 404 `machine_not_found`. Resolves with advice (thicker than the machine
 * cuts in one pass, by the estimate) when all are fine: the machine's reach warns, only the rule's limit refuses.
 */
export async function checkDeclaredMaterials(machineId: string, materials: DeclaredMaterial[], trx?: Conn): Promise<string[]> {
  const q = trx ?? db();
  const machine = UUID.test(machineId) ? await getMachine(machineId, q) : null;
  if (!machine) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
  const ids = [...new Set(materials.map((m) => m.materialId))];
  const bad = ids.filter((id) => !UUID.test(id));
  const rows = bad.length ? [] : ((await q('materials').whereIn('id', ids)) as Row[]);
  const byId = new Map(rows.map((r) => [r.id, toMaterial(r)]));
  const overrides = rows.length
    ? ((await q('material_machine_overrides').where({ machine_id: machineId }).whereIn('material_id', ids)) as OverrideRow[]).map(toOverride)
    : [];
  const warnings: string[] = [];
  for (const [i, d] of materials.entries()) {
    const material = byId.get(d.materialId);
    if (!material) throw new DomainError('invalid', 'invalid', 'A declared material is not in the catalogue.', { [`materials.${i}.materialId`]: 'Unknown material.' });
    if (!(Number.isFinite(d.thicknessMm) && d.thicknessMm > 0 && d.thicknessMm <= 100)) {
      throw new DomainError('invalid', 'invalid', 'A declared thickness is out of range.', { [`materials.${i}.thicknessMm`]: 'Thickness must be above 0 mm and at most 100 mm.' });
    }
    const decision = decide(material, machine, d, overrides.find((o) => o.materialId === material.id));
    if (!decision.ok) throw new DomainError('invalid', decision.code, decision.message, { [`materials.${i}`]: decision.message });
    warnings.push(...decision.warnings);
  }
  return warnings;
}

export type CutAdvice =
  | (CutEstimate & { machine: { id: string; name: string; powerW: number } | null; ruleMaxCutMm: number | null; allowedByRule: boolean; notes: string[] })
  | { notOnThisMachine: true; machine: { id: string; name: string; powerW: number }; message: string };

/**
 * The starting cut settings for a catalogue material: on a stored machine (its power and its effective rule,
 * overrides included: "not on this machine" where the material is blocked or not cut there) or for a bare power.
 * 422 when it cannot be estimated or a number is out of range.
 */
export async function cutEstimateFor(materialId: string, on: { powerW?: number; machineId?: string }, thicknessMm: number, kerfMm?: number): Promise<CutAdvice> {
  const m = await getMaterial(materialId);
  if (!m) throw new DomainError('invalid', 'invalid', 'Unknown material.', { materialId: 'Unknown material.' });
  let machine: Machine | null = null;
  let effective: EffectiveRule | null = null;
  if (on.machineId) {
    machine = UUID.test(on.machineId) ? await getMachine(on.machineId) : null;
    if (!machine) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
    const o = (await db()('material_machine_overrides').where({ material_id: m.id, machine_id: machine.id }).first()) as OverrideRow | undefined;
    effective = effectiveRule(m, machine, o ? toOverride(o) : null);
    const brief = { id: machine.id, name: machine.name, powerW: machine.powerW };
    if (effective.rule === 'blocked') return { notOnThisMachine: true, machine: brief, message: `Not on this machine: ${m.name} is blocked on ${machine.name}. ${effective.reason}` };
    if (!effective.modes.includes('cut')) return { notOnThisMachine: true, machine: brief, message: `Not on this machine: ${m.name} may not be cut on ${machine.name} (${effective.modes.join(', ') || 'nothing'} only). ${effective.reason}` };
  } else {
    const c = catalogueRule(m);
    if (c.rule === 'blocked') throw new DomainError('invalid', 'not_estimable', `${m.name} is blocked: ${c.reason}`, { materialId: 'Blocked material.' });
  }
  if (m.densityGPerCm3 == null || m.heatOfGasificationJPerG == null || m.cutEfficiency == null || !m.modes.includes('cut')) {
    throw new DomainError('invalid', 'not_estimable', `${m.name} is not cut on these machines, or has no cutting figures on record.`, { materialId: 'No cutting figures for this material.' });
  }
  const powerW = machine ? machine.powerW : on.powerW;
  if (powerW === undefined) throw new DomainError('invalid', 'invalid', 'Give a machine or a power.', { powerW: 'Give a machine or a power.' });
  try {
    const e = estimateCut(
      { name: m.name, densityGPerCm3: m.densityGPerCm3, heatOfGasificationJPerG: m.heatOfGasificationJPerG, efficiency: m.cutEfficiency, maxCutMm: effective ? effective.maxCutMm : m.maxCutMm },
      { powerW, thicknessMm, ...(kerfMm !== undefined ? { kerfMm } : {}) },
    );
    const ruleMaxCutMm = effective ? effective.maxCutMm : m.maxCutMm;
    const allowedByRule = ruleMaxCutMm == null || thicknessMm <= ruleMaxCutMm + 1e-9;
    const notes: string[] = [];
    if (!allowedByRule) notes.push(`The rule allows at most ${ruleMaxCutMm} mm of ${m.name}${machine ? ` on ${machine.name}` : ''}: a booking for ${thicknessMm} mm is refused.`);
    else if (!e.withinReach) notes.push(`Beyond what the estimate says ${machine ? machine.name : `${powerW} W`} cuts in one pass (about ${e.reachMm} mm): expect several passes. Advice only.`);
    return { ...e, machine: machine ? { id: machine.id, name: machine.name, powerW: machine.powerW } : null, ruleMaxCutMm, allowedByRule, notes };
  } catch (err) {
    if (err instanceof CutInputError) throw new DomainError('invalid', 'invalid', err.message, { [err.field]: err.message });
    throw err;
  }
}
