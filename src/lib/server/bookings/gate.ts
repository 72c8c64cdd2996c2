/**
 * The checks every new booking passes, in the caller's transaction: the machine lock, the per-person lock,
 * the rule context (rules, opening hours, closures, site zone), free time, the weekly quota, and the insert.
 * The weekly quota is checked under a per-person advisory lock held to the end of the transaction.
 */
import type { Knex } from 'knex';
import { pgCode, PG } from '../db';
import { HttpError } from '../errors';
import { getRules, listClosures } from '../booking-rules';
import { localWeek } from '../../availability';
import { ACTIVE_STATES, QUOTA_STATES, toBooking, type Booking, type Conn, type MachineRow, type Row } from './records';

export async function lockMachine(trx: Knex.Transaction, machineId: string): Promise<MachineRow> {
  // FOR SHARE: a concurrent status change (out of service) waits for this booking, or this booking sees it
  const m = (await trx('machines').where({ id: machineId }).whereNull('retired_at').forShare().first('id', 'name', 'code', 'status')) as MachineRow | undefined;
  if (!m) throw new HttpError(404, 'not_found', 'No such machine.');
  return m;
}

export function outOfService(m: MachineRow): HttpError {
  return new HttpError(409, 'machine_out_of_service', `${m.name} is out of service and takes no bookings until a steward puts it back in service.`);
}

/** Serialises quota checks of one person: concurrent bookings by the same person run one after another. */
export async function lockPerson(trx: Knex.Transaction, personId: string): Promise<void> {
  await trx.raw("SELECT pg_advisory_xact_lock(hashtextextended('bookings.person:' || ?, 0))", [personId]);
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

export function slotTaken(): HttpError {
  return new HttpError(409, 'slot_taken', 'Someone else has that time (or its cool-down) on this machine. Choose another free time.');
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

/** Site settings read on the caller's connection (inside a transaction, never a second pooled connection). */
export async function siteSettings(trx: Conn): Promise<{ name: string; timeZone: string }> {
  const row = await trx('site_settings').where({ id: 1 }).first('name', 'time_zone');
  return row ? { name: row.name, timeZone: row.time_zone } : { name: 'Beamwarden', timeZone: 'UTC' };
}

export async function ruleContext(machineId: string, from: Date, to: Date, trx: Conn) {
  const [rules, settings, closures] = await Promise.all([getRules(machineId, trx), siteSettings(trx), listClosures(machineId, from, to, trx)]);
  return { rules, hours: rules.hours, timeZone: settings.timeZone, siteName: settings.name, closures };
}

export async function insertBooking(trx: Knex.Transaction, row: Record<string, unknown>): Promise<Booking> {
  try {
    // a savepoint, so a refused insert can be answered without poisoning the caller's transaction
    const [r] = await trx.transaction(async (sp) => sp('bookings').insert(row).returning('*'));
    return toBooking(r as Row);
  } catch (err) {
    if (pgCode(err) === PG.exclusionViolation) throw slotTaken();
    throw err;
  }
}

