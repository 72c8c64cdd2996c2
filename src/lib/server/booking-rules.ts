/** Booking rules of each machine: opening hours, closures, grid, lengths, buffer, lead, horizon, quotas. All SQL of this area. */
import { db, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { DEFAULT_RULES, type BookingRules, type Closure, type ClosureRow, type MachineRules, type WeeklyHours } from '@lib/availability';
import { TIERS, type Tier } from '@lib/vocabulary';

export type { ClosureRow, MachineRules } from '@lib/availability';

/** A machine's rules with its opening hours and quotas, in one statement (it is read on every booking and feed). */
export async function getRules(machineId: string, trx: Conn = db()): Promise<MachineRules> {
  return (await getRulesOf([machineId], trx)).get(machineId)!;
}

type RulesRow = { n: number; hours: WeeklyHours[] | null; quotas: { tier: Tier; minutes: number }[] | null }
  & Record<'slot_minutes' | 'min_minutes' | 'max_minutes' | 'buffer_minutes' | 'lead_minutes' | 'horizon_days' | 'cancel_cutoff_minutes', number | null>;

/** The rules of each of these machines (defaults where a machine has none), in one statement. */
export async function getRulesOf(machineIds: readonly string[], trx: Conn = db()): Promise<Map<string, MachineRules>> {
  return (await rulesAndClosuresOf(machineIds, trx)).rules;
}

/**
 * A select expression for the booking rules' stamp (migration 20261207300100): it changes with every committed write
 * to the rules, opening hours, tier quotas or closures. Put it in a statement the caller runs anyway and pass its
 * value to getRulesAndClosures: while it is unchanged, the rules come from this process's memory.
 */
/** A closure as json (times as ISO text), over closures c: closuresFromJson reads an array of them. */
const CLOSURE_JSON = `json_build_object('id', c.id, 'machineId', c.machine_id, 'startsAt', c.starts_at, 'endsAt', c.ends_at, 'reason', c.reason)`;

export const RULES_STAMP_SQL = '(SELECT stamp FROM booking_rules_stamp WHERE id = 1)';

/**
 * Rules, and closures, kept per machine under the stamp they were read with (in the same statement, so each is one
 * snapshot). Closures are kept from a day before the read on (bookings and checks look ahead); an older window is
 * read from the table. A machine with very many closures ahead has only its rules kept.
 */
const keptRules = new Map<string, { stamp: string; rules: MachineRules }>();
const keptClosures = new Map<string, { stamp: string; closures: ClosureRow[]; from: Date }>();
const KEPT_CLOSURES_MAX = 200;
const KEPT_MACHINES_MAX = 1000;
const DAY_MS = 86_400_000;

function keep<T>(map: Map<string, T>, id: string, value: T): void {
  if (map.size >= KEPT_MACHINES_MAX && !map.has(id)) map.clear();
  map.set(id, value);
}

const overlapping = (closures: readonly ClosureRow[], from: Date, to: Date) => closures.filter((c) => c.startsAt < to && c.endsAt > from);

/**
 * The rules of each of these machines, as getRulesOf, from this process's memory when all were kept under `stamp`
 * (RULES_STAMP_SQL read by the caller in a statement of its own); else in one statement, kept for the next caller.
 */
export async function getRulesOfStamped(machineIds: readonly string[], stamp: string | null, trx: Conn = db()): Promise<Map<string, MachineRules>> {
  if (stamp && machineIds.every((id) => keptRules.get(id)?.stamp === stamp)) return new Map(machineIds.map((id) => [id, keptRules.get(id)!.rules]));
  const r = await rulesAndClosuresOf(machineIds, trx);
  if (r.stamp) for (const [id, rules] of r.rules) keep(keptRules, id, { stamp: r.stamp, rules });
  return r.rules;
}

/**
 * A machine's rules and its closures (and the whole site's) overlapping [from, to), in one statement: what a new
 * booking is checked against (getRules and listClosures answer the same). With `stamp` (RULES_STAMP_SQL read by the
 * caller) and this machine's rules and closures kept under that stamp, no statement at all.
 */
export async function getRulesAndClosures(machineId: string, from: Date, to: Date, trx: Conn = db(), stamp?: string | null): Promise<{ rules: MachineRules; closures: ClosureRow[] }> {
  const rulesHit = stamp ? keptRules.get(machineId) : undefined;
  const closuresHit = stamp ? keptClosures.get(machineId) : undefined;
  if (stamp && rulesHit && closuresHit && rulesHit.stamp === stamp && closuresHit.stamp === stamp && from >= closuresHit.from) {
    return { rules: rulesHit.rules, closures: overlapping(closuresHit.closures, from, to) };
  }
  const closuresFrom = new Date(Math.min(from.getTime(), Date.now() - DAY_MS));
  const r = await rulesAndClosuresOf([machineId], trx, { from: closuresFrom, to: null });
  const rules = r.rules.get(machineId)!;
  const closures = r.closures.get(machineId) ?? [];
  if (r.stamp) {
    keep(keptRules, machineId, { stamp: r.stamp, rules });
    if (closures.length <= KEPT_CLOSURES_MAX) keep(keptClosures, machineId, { stamp: r.stamp, closures, from: closuresFrom });
  }
  return { rules, closures: overlapping(closures, from, to) };
}

async function rulesAndClosuresOf(machineIds: readonly string[], trx: Conn, window?: { from: Date; to: Date | null }) {
  const out = new Map<string, MachineRules>();
  const closuresOf = new Map<string, ClosureRow[]>();
  if (!machineIds.length) return { rules: out, closures: closuresOf, stamp: null };
  // closures in listClosures' order (by start); their times come as ISO text from json and are turned into Dates below
  const closureColumn = window
    ? `, (SELECT json_agg(${CLOSURE_JSON} ORDER BY c.starts_at)
          FROM closures c WHERE ${window.to ? 'c.starts_at < ? AND ' : ''}c.ends_at > ? AND (c.machine_id = m.id OR c.machine_id IS NULL)) AS closures`
    : '';
  const { rows } = await trx.raw(
    `SELECT m.n, r.slot_minutes, r.min_minutes, r.max_minutes, r.buffer_minutes, r.lead_minutes, r.horizon_days, r.cancel_cutoff_minutes,
       (SELECT json_agg(json_build_object('weekday', h.weekday, 'opensMinute', h.opens_minute, 'closesMinute', h.closes_minute) ORDER BY h.weekday, h.opens_minute)
          FROM opening_hours h WHERE h.machine_id = m.id) AS hours,
       (SELECT json_agg(json_build_object('tier', q.tier, 'minutes', q.weekly_minutes)) FROM machine_tier_quotas q WHERE q.machine_id = m.id) AS quotas,
       ${RULES_STAMP_SQL} AS stamp
       ${closureColumn}
     FROM unnest(?::uuid[]) WITH ORDINALITY AS m(id, n) LEFT JOIN machine_booking_rules r ON r.machine_id = m.id`,
    window ? [...(window.to ? [window.to] : []), window.from, [...machineIds]] : [[...machineIds]],
  );
  let stamp: string | null = null;
  for (const row of rows as (RulesRow & { stamp: string | null; closures?: { id: string; machineId: string | null; startsAt: string; endsAt: string; reason: string }[] | null })[]) {
    stamp = row.stamp;
    if (window) {
      closuresOf.set(machineIds[Number(row.n) - 1]!, closuresFromJson(row.closures));
    }
    const quotas = Object.fromEntries(TIERS.map((t) => [t, null])) as Record<Tier, number | null>;
    for (const q of row.quotas ?? []) quotas[q.tier] = q.minutes;
    // keyed by the id as the caller wrote it
    const id = machineIds[Number(row.n) - 1]!;
    out.set(id, {
      machineId: id,
      slotMinutes: row.slot_minutes ?? DEFAULT_RULES.slotMinutes,
      minMinutes: row.min_minutes ?? DEFAULT_RULES.minMinutes,
      maxMinutes: row.max_minutes ?? DEFAULT_RULES.maxMinutes,
      bufferMinutes: row.buffer_minutes ?? DEFAULT_RULES.bufferMinutes,
      leadMinutes: row.lead_minutes ?? DEFAULT_RULES.leadMinutes,
      horizonDays: row.horizon_days ?? DEFAULT_RULES.horizonDays,
      cancelCutoffMinutes: row.cancel_cutoff_minutes ?? DEFAULT_RULES.cancelCutoffMinutes,
      quotas,
      hours: row.hours ?? [],
    });
  }
  return { rules: out, closures: closuresOf, stamp };
}

export interface RulesInput extends BookingRules {
  quotas: Record<Tier, number | null>;
  hours: WeeklyHours[];
}

/** Replaces a machine's rules, quotas and opening hours in one transaction (audited). */
export async function saveRules(actorId: string, machineId: string, input: RulesInput): Promise<MachineRules> {
  return transaction(async (trx) => {
    const machine = await trx('machines').where({ id: machineId }).whereNull('retired_at').first('id', 'name');
    if (!machine) throw new DomainError('not_found', 'not_found', 'No such machine.');
    const before = await getRules(machineId, trx);
    const row = {
      machine_id: machineId,
      slot_minutes: input.slotMinutes,
      min_minutes: input.minMinutes,
      max_minutes: input.maxMinutes,
      buffer_minutes: input.bufferMinutes,
      lead_minutes: input.leadMinutes,
      horizon_days: input.horizonDays,
      cancel_cutoff_minutes: input.cancelCutoffMinutes,
      updated_at: trx.fn.now(),
    };
    await trx('machine_booking_rules').insert(row).onConflict('machine_id').merge();
    await trx('machine_tier_quotas').where({ machine_id: machineId }).delete();
    const quotaRows = TIERS.filter((t) => input.quotas[t] !== null).map((t) => ({ machine_id: machineId, tier: t, weekly_minutes: input.quotas[t] }));
    if (quotaRows.length) await trx('machine_tier_quotas').insert(quotaRows);
    await trx('opening_hours').where({ machine_id: machineId }).delete();
    if (input.hours.length) {
      await trx('opening_hours').insert(
        input.hours.map((h) => ({ machine_id: machineId, weekday: h.weekday, opens_minute: h.opensMinute, closes_minute: h.closesMinute })),
      );
    }
    const after = await getRules(machineId, trx);
    await recordAudit(trx, {
      actorId,
      kind: 'machine.rules_changed',
      subjectType: 'machine',
      subjectId: machineId,
      summary: `Booking rules of ${machine.name} changed`,
      before,
      after,
    });
    return after;
  });
}

/**
 * listClosures as one json select expression, for a statement the caller runs anyway: the closures overlapping a
 * period of the machines `machineIdsSql` lists (a subquery) and of the whole site, or every closure in it when
 * null. Its bindings: `bindings(from, to)`; read the value with closuresFromJson.
 */
export function closuresJsonSql(machineIdsSql: string | null) {
  return {
    sql: `(SELECT json_agg(${CLOSURE_JSON} ORDER BY c.starts_at)
             FROM closures c WHERE c.starts_at < ? AND c.ends_at > ?${machineIdsSql ? ` AND (c.machine_id IN (${machineIdsSql}) OR c.machine_id IS NULL)` : ''})`,
    bindings: (from: Date, to: Date) => [to, from],
  };
}

/** The closures in closuresJsonSql's value (times as Dates). */
export function closuresFromJson(value: unknown): ClosureRow[] {
  return ((value ?? []) as { id: string; machineId: string | null; startsAt: string; endsAt: string; reason: string }[])
    .map((c) => ({ id: c.id, machineId: c.machineId, startsAt: new Date(c.startsAt), endsAt: new Date(c.endsAt), reason: c.reason }));
}

/** Closures of a machine (and of the whole site) that overlap [from, to). */
export async function listClosures(machineId: string | null, from: Date, to: Date, trx: Conn = db()): Promise<ClosureRow[]> {
  const q = trx('closures').where('starts_at', '<', to).andWhere('ends_at', '>', from).orderBy('starts_at');
  if (machineId) q.andWhere((w) => w.where('machine_id', machineId).orWhereNull('machine_id'));
  const rows = await q;
  return rows.map((r: { id: string; machine_id: string | null; starts_at: Date; ends_at: Date; reason: string }) => ({
    id: r.id,
    machineId: r.machine_id,
    startsAt: r.starts_at,
    endsAt: r.ends_at,
    reason: r.reason,
  }));
}

export async function addClosure(actorId: string, input: { machineId: string | null; startsAt: Date; endsAt: Date; reason: string }): Promise<ClosureRow> {
  if (input.endsAt <= input.startsAt) throw new DomainError('invalid', 'invalid', 'A closure ends after it starts.', { endsAt: 'Choose an end after the start.' });
  return transaction(async (trx) => {
    if (input.machineId) {
      const m = await trx('machines').where({ id: input.machineId }).first('id');
      if (!m) throw new DomainError('not_found', 'not_found', 'No such machine.');
    }
    const [r] = await trx('closures')
      .insert({ machine_id: input.machineId, starts_at: input.startsAt, ends_at: input.endsAt, reason: input.reason, created_by: actorId })
      .returning('*');
    await recordAudit(trx, {
      actorId,
      kind: 'closure.added',
      subjectType: 'closure',
      subjectId: r.id,
      summary: `Closure added: ${input.reason}`,
      after: { machineId: input.machineId, startsAt: input.startsAt, endsAt: input.endsAt, reason: input.reason },
    });
    return { id: r.id, machineId: r.machine_id, startsAt: r.starts_at, endsAt: r.ends_at, reason: r.reason };
  });
}

export async function removeClosure(actorId: string, id: string): Promise<void> {
  await transaction(async (trx) => {
    const r = await trx('closures').where({ id }).first();
    if (!r) throw new DomainError('not_found', 'not_found', 'No such closure.');
    await trx('closures').where({ id }).delete();
    await recordAudit(trx, {
      actorId,
      kind: 'closure.removed',
      subjectType: 'closure',
      subjectId: id,
      summary: `Closure removed: ${r.reason}`,
      before: { machineId: r.machine_id, startsAt: r.starts_at, endsAt: r.ends_at, reason: r.reason },
    });
  });
}

export async function getTier(personId: string, trx: Conn = db()): Promise<Tier> {
  const r = await trx('people').where({ id: personId }).first('tier');
  return (r?.tier ?? 'community') as Tier;
}
