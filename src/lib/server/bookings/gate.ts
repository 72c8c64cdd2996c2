/**
 * The checks every new booking passes, in the caller's transaction: the machine lock, the per-person lock,
 * the rule context (rules, opening hours, closures, site zone), free time, the weekly quota, and the insert.
 * The weekly quota is checked under a per-person advisory lock held to the end of the transaction.
 */
import type { Knex } from 'knex';
import { db, pgCode, PG, prepared } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { auditInsertSql, type AuditEntry } from '@lib/server/audit';
import { getRulesAndClosures, RULES_STAMP_SQL } from '@lib/server/booking-rules';
import { operateFactsSql, type OperateFacts } from '@lib/server/clearances/state';
import { getSettings } from '@lib/server/settings';
import { lockMachine } from '@lib/server/machines';
import { PAYMENT_FAILED_SQL, paymentRequired } from '@lib/server/payments/charge-runs';
import type { Tier } from '@lib/vocabulary';
import { localWeek } from '@lib/availability';
import { ACTIVE_STATES, QUOTA_STATES, toBooking, type Booking, type Conn, type MachineRow, type Row } from './records';

/**
 * The machine lock of machines.ts, FOR SHARE, for a new booking: a concurrent status change (out of service) or
 * retirement waits for this booking, or this booking sees it. With `personId`, the same statement also takes that
 * person's advisory lock (lockPerson), so the statements after it see every booking the person's other requests
 * committed. A retired machine is not found. With `refuseFailedPayment` too, it asks assertCanBook's question in
 * the same statement and refuses (402) while the person has a failed payment. With `personId`, the same statement
 * also reads what canOperate decides from (`operate`, decide with operateVerdict) and the booking rules' stamp
 * (`rulesStamp`, for ruleContext), so neither needs a statement of its own.
 */
export async function lockForBooking(trx: Knex.Transaction, machineId: string, personId?: string, refuseFailedPayment = false): Promise<LockedForBooking> {
  const facts = `${operateFactsSql('machines.id')} AS operate, ${RULES_STAMP_SQL} AS rules_stamp`;
  const also = !personId
    ? undefined
    : refuseFailedPayment
      ? trx.raw(`pg_advisory_xact_lock(${PERSON_LOCK}) AS person_lock, ${PAYMENT_FAILED_SQL} AS payment_failed, ${facts}, ${GENERIC_PLANS} AS plans`, [personId, personId, personId])
      : trx.raw(`pg_advisory_xact_lock(${PERSON_LOCK}) AS person_lock, ${facts}`, [personId, personId]);
  const m = await lockMachine(trx, machineId, 'share', also);
  if (!m || m.retiredAt) throw new DomainError('not_found', 'not_found', 'No such machine.');
  if (m.also?.payment_failed) throw paymentRequired();
  const row: LockedForBooking = { id: m.id, name: m.name, code: m.code, status: m.status };
  if (m.also) {
    row.operate = (m.also.operate ?? null) as OperateFacts | null;
    row.rulesStamp = (m.also.rules_stamp ?? null) as string | null;
  }
  return row;
}

/** The locked machine, and with a person: their clearance facts on it and the booking rules' stamp, read in the lock statement. */
export interface LockedForBooking extends MachineRow {
  operate?: OperateFacts | null;
  rulesStamp?: string | null;
}

const PERSON_LOCK = "hashtextextended('bookings.person:' || ?, 0)";

/**
 * For the rest of a new booking's transaction (set_config local: it ends with the transaction), the prepared
 * statements after the lock (clashAndUse, pg-boss's insert) run on their plan cached per connection instead of
 * being planned again with each booking's values. PostgreSQL would never choose that itself: without the values it
 * estimates hundreds of rows where there are a handful. The plan is the same one (the machine-and-time GiST index,
 * the person-and-start index), and planning the clash statement cost more than running it (decision 0466).
 */
const GENERIC_PLANS = "set_config('plan_cache_mode', 'force_generic_plan', true)";

export function outOfService(m: MachineRow): DomainError {
  return new DomainError('conflict', 'machine_out_of_service', `${m.name} is out of service and takes no bookings until a steward puts it back in service.`);
}

/** Serialises quota checks of one person: concurrent bookings by the same person run one after another. */
export async function lockPerson(trx: Knex.Transaction, personId: string): Promise<void> {
  await trx.raw(`SELECT pg_advisory_xact_lock(${PERSON_LOCK})`, [personId]);
}

export async function assertFree(trx: Conn, machineId: string, startsAt: Date, until: Date, exceptId?: string): Promise<void> {
  const q = trx('bookings')
    .where({ machine_id: machineId })
    .whereIn('state', ACTIVE_STATES as unknown as string[])
    .whereRaw("tstzrange(starts_at, occupied_until, '[)') && tstzrange(?, ?, '[)')", [startsAt, until]);
  if (exceptId) q.whereNot('id', exceptId);
  const clash = await q.first('id');
  if (clash) throw slotTaken();
}

export function slotTaken(): DomainError {
  return new DomainError('conflict', 'slot_taken', 'Someone else has that time (or its cool-down) on this machine. Choose another free time.');
}

/** Minutes the person has booked on the machine in the site's week containing `at`. */
export async function weeklyMinutes(trx: Conn, personId: string, machineId: string, at: Date, tz: string, exceptId?: string): Promise<number> {
  const week = localWeek(at, tz);
  const q = trx('bookings')
    .where({ person_id: personId, machine_id: machineId })
    .whereIn('kind', ['personal', 'hold'])
    .whereIn('state', QUOTA_STATES)
    .where('starts_at', '>=', week.start)
    .where('starts_at', '<', week.end);
  if (exceptId) q.whereNot('id', exceptId);
  const r = await q.first(trx.raw('coalesce(sum(extract(epoch from (ends_at - starts_at)) / 60), 0)::float8 AS minutes'));
  return Number((r as { minutes?: number } | undefined)?.minutes ?? 0);
}

/** The active states written into the statement: its plan, made once for every booking, can then use the exclusion constraint's partial index (active bookings only). */
const ACTIVE_STATES_SQL = ACTIVE_STATES.map((s) => `'${s}'`).join(', ');

/**
 * For a new personal booking, in one statement (run after the person's lock): the first active booking clashing
 * with [startsAt, until) (what assertFree looks for), the person's minutes on the machine in the site week of
 * `startsAt` (weeklyMinutes), and the person's tier, e-mail and name; with `also`, that select expression's value too.
 */
export async function clashAndUse(trx: Conn, personId: string, machineId: string, startsAt: Date, until: Date, tz: string, also?: { sql: string; bindings: unknown[] }) {
  const week = localWeek(startsAt, tz);
  // planning it took PostgreSQL longer than running it: parsed and planned once per connection
  const { rows } = await prepared(trx.raw(
    `SELECT (SELECT b.id FROM bookings b WHERE b.machine_id = ? AND b.state IN (${ACTIVE_STATES_SQL})
               AND tstzrange(b.starts_at, b.occupied_until, '[)') && tstzrange(?, ?, '[)') LIMIT 1) AS clash,
            (SELECT coalesce(sum(extract(epoch from (b.ends_at - b.starts_at)) / 60), 0)::float8 FROM bookings b
              WHERE b.person_id = ? AND b.machine_id = ? AND b.kind IN ('personal', 'hold') AND b.state = ANY(?::text[])
                AND b.starts_at >= ? AND b.starts_at < ?) AS minutes,
            p.tier, p.email, p.name${also ? `, ${also.sql} AS also` : ''}
     FROM (SELECT 1) one LEFT JOIN people p ON p.id = ?`,
    [machineId, startsAt, until, personId, machineId, QUOTA_STATES, week.start, week.end, ...((also?.bindings ?? []) as Knex.RawBinding[]), personId],
  ));
  const r = rows[0] as { clash: string | null; minutes: number | null; tier: Tier | null; email: string | null; name: string | null; also?: unknown };
  return {
    clash: r.clash,
    usedMinutes: Number(r.minutes ?? 0),
    tier: (r.tier ?? 'community') as Tier,
    person: r.email !== null ? { email: r.email, name: r.name ?? '' } : null,
    /** the value of `also`, a select expression run by the same statement (after the person's lock) */
    also: r.also,
  };
}

/**
 * The person's tier and their minutes on each of the machines `machineIdsSql` lists (a subquery giving machine ids,
 * e.g. `SELECT id FROM ms` over a WITH item of the caller's statement) in a week (what weeklyMinutes counts), as one json select expression for a statement the
 * caller runs anyway (the week view). Its bindings: `bindings(personId, week)`; read the value with weekUseFromJson.
 */
export function weekUseJsonSql(machineIdsSql: string) {
  return {
    sql: `(SELECT json_build_object('tier', p.tier, 'used', (SELECT json_agg(json_build_object('machineId', u.machine_id, 'minutes', u.minutes)) FROM (
               SELECT b.machine_id, sum(extract(epoch from (b.ends_at - b.starts_at)) / 60)::float8 AS minutes FROM bookings b
               WHERE b.person_id = p.id AND b.machine_id IN (${machineIdsSql}) AND b.kind IN ('personal', 'hold') AND b.state = ANY(?::text[])
                 AND b.starts_at >= ? AND b.starts_at < ?
               GROUP BY b.machine_id) u))
           FROM (SELECT 1) one LEFT JOIN people p ON p.id = ?)`,
    bindings: (personId: string, week: { start: Date; end: Date }) => [QUOTA_STATES, week.start, week.end, personId],
  };
}

/** The tier (community when the person is gone) and minutes by machine, from weekUseJsonSql's value. */
export function weekUseFromJson(value: unknown): { tier: Tier; usedOf: Map<string, number> } {
  const r = (value ?? {}) as { tier?: Tier | null; used?: { machineId: string; minutes: number }[] | null };
  return { tier: (r.tier ?? 'community') as Tier, usedOf: new Map((r.used ?? []).map((u) => [u.machineId, Number(u.minutes)])) };
}

/** Site settings read on the caller's connection (inside a transaction, never a second pooled connection). */
export const siteSettings = (trx: Conn) => getSettings(trx);

/**
 * The rules, opening hours, closures and site zone a booking of [from, to) on the machine is checked against. With
 * `rulesStamp` (read in the caller's lock statement) the rules and closures come from this process's memory while
 * no one has changed them since they were read.
 */
export async function ruleContext(machineId: string, from: Date, to: Date, trx: Conn, rulesStamp?: string | null) {
  // rules and closures in one statement (or none), then the settings (on the same connection: one after the other anyway)
  const [{ rules, closures }, settings] = await Promise.all([getRulesAndClosures(machineId, from, to, trx, rulesStamp), siteSettings(trx)]);
  return { rules, hours: rules.hours, timeZone: settings.timeZone, siteName: settings.name, closures };
}

/**
 * Inserts a booking; 409 slot_taken when the exclusion constraint refuses it. `savepoint: false` (the caller's
 * transaction ends on that refusal anyway) saves the SAVEPOINT and RELEASE round trips. With `audit`, the audit row
 * (its subject: this booking) is written by the same statement.
 */
export async function insertBooking(trx: Knex.Transaction, row: Record<string, unknown>, { savepoint = true, audit }: { savepoint?: boolean; audit?: Omit<AuditEntry, 'subjectId'> } = {}): Promise<Booking> {
  const insert = async (q: Knex.Transaction): Promise<Row> => {
    if (!audit) return ((await q('bookings').insert(row).returning('*')) as Row[])[0]!;
    const b = q('bookings').insert(row).returning('*').toSQL();
    const a = auditInsertSql(audit, 'b.id', 'b');
    const { rows } = await q.raw(`WITH b AS (${b.sql}), a AS (${a.sql}) SELECT * FROM b`, [...b.bindings, ...a.bindings] as Knex.RawBinding[]);
    return rows[0] as Row;
  };
  try {
    // a savepoint, so a refused insert can be answered without poisoning the caller's transaction
    const r = savepoint ? await trx.transaction(async (sp) => insert(sp)) : await insert(trx);
    return toBooking(r);
  } catch (err) {
    if (pgCode(err) === PG.exclusionViolation) throw slotTaken();
    throw err;
  }
}
