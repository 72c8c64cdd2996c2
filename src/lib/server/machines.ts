/** Machines: all SQL for this area — the list, one machine, adding and editing (admin, audited). Retiring is a cascade: cascades/retire-machine.ts. */
import type { Knex } from 'knex';
import { db, pgCode, PG, prepared, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import type { MachineFields, MachineRecord, MachineStatus, TubeType } from '@lib/machines-shared';
import type { ClearanceLevel } from '@lib/clearance-rules';

export interface Machine extends MachineRecord {
  retiredAt: Date | null;
}

type Row = {
  id: string; code: string; name: string; power_w: number; tube_type: TubeType; wavelength_um: number;
  bed_width_mm: number; bed_depth_mm: number; beam_diameter_mm: number; divergence_mrad: number;
  lens_focal_mm: number; coolant_type: 'water' | 'air'; coolant_min_c: string | null; coolant_max_c: string | null;
  status: MachineStatus; group_id: string | null; required_level: ClearanceLevel; retired_at: Date | null;
};

const num = (v: string | number | null): number | null => (v === null ? null : Number(v));

function toMachine(r: Row): Machine {
  return {
    id: r.id,
    code: r.code,
    name: r.name,
    powerW: Number(r.power_w),
    tubeType: r.tube_type,
    wavelengthUm: Number(r.wavelength_um),
    bedWidthMm: r.bed_width_mm,
    bedDepthMm: r.bed_depth_mm,
    beamDiameterMm: Number(r.beam_diameter_mm),
    divergenceMrad: Number(r.divergence_mrad),
    lensFocalMm: Number(r.lens_focal_mm),
    coolantType: r.coolant_type,
    coolantMinC: num(r.coolant_min_c),
    coolantMaxC: num(r.coolant_max_c),
    status: r.status,
    groupId: r.group_id,
    requiredLevel: r.required_level,
    retiredAt: r.retired_at,
  };
}

/** Machines in use (not retired), by name. */
export async function listMachines(trx: Conn = db()): Promise<Machine[]> {
  const rows = (await trx('machines').whereNull('retired_at').orderBy('name')) as Row[];
  return rows.map(toMachine);
}

export async function getMachine(id: string, trx: Conn = db()): Promise<Machine | null> {
  const row = (await trx('machines').where({ id }).first()) as Row | undefined;
  return row ? toMachine(row) : null;
}

export async function getMachineByCode(code: string, trx: Conn = db()): Promise<Machine | null> {
  const row = (await trx('machines').where({ code }).whereNull('retired_at').first()) as Row | undefined;
  return row ? toMachine(row) : null;
}

/** The public shape of GET /api/machines. */
export function machineSummary(m: Machine) {
  return { id: m.id, code: m.code, name: m.name, powerW: m.powerW, tubeType: m.tubeType, wavelengthUm: m.wavelengthUm, status: m.status };
}

// ---------------------------------------------------------------------------------------------
// Adding, editing and retiring (admin)

export type { MachineFields };

const COLUMNS: Record<keyof MachineFields, string> = {
  name: 'name', groupId: 'group_id', requiredLevel: 'required_level', powerW: 'power_w', tubeType: 'tube_type',
  wavelengthUm: 'wavelength_um', bedWidthMm: 'bed_width_mm', bedDepthMm: 'bed_depth_mm', beamDiameterMm: 'beam_diameter_mm',
  divergenceMrad: 'divergence_mrad', lensFocalMm: 'lens_focal_mm', coolantType: 'coolant_type', coolantMinC: 'coolant_min_c', coolantMaxC: 'coolant_max_c',
};

function toColumns(fields: Partial<MachineFields>): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [k, column] of Object.entries(COLUMNS)) {
    const v = fields[k as keyof MachineFields];
    if (v !== undefined) out[column] = v;
  }
  // an air-cooled machine has no chiller to read
  if (fields.coolantType === 'air') Object.assign(out, { coolant_min_c: null, coolant_max_c: null });
  return out;
}

function fieldsOf(m: Machine): MachineFields {
  return {
    name: m.name, groupId: m.groupId ?? '', requiredLevel: m.requiredLevel, powerW: m.powerW, tubeType: m.tubeType, wavelengthUm: m.wavelengthUm,
    bedWidthMm: m.bedWidthMm, bedDepthMm: m.bedDepthMm, beamDiameterMm: m.beamDiameterMm, divergenceMrad: m.divergenceMrad,
    lensFocalMm: m.lensFocalMm, coolantType: m.coolantType, coolantMinC: m.coolantMinC, coolantMaxC: m.coolantMaxC,
  };
}

/** Opening hours a new machine starts with (Monday–Friday 09:00–17:00, site time) until the admin sets its rules. */
export const NEW_MACHINE_HOURS = [1, 2, 3, 4, 5].map((weekday) => ({ weekday, opens_minute: 9 * 60, closes_minute: 17 * 60 }));

async function mustHaveGroup(trx: Knex.Transaction, groupId: string): Promise<void> {
  if (!(await trx('machine_groups').where({ id: groupId }).first('id'))) {
    throw new DomainError('invalid', 'group_not_found', 'Choose one of the machine groups (Admin › Machine groups).', { groupId: 'No such machine group.' });
  }
}

function duplicateCode(err: unknown, code: string): never {
  if (pgCode(err) === PG.uniqueViolation) throw new DomainError('conflict', 'code_taken', `Another machine (perhaps a retired one) already has the code “${code}”; label codes are never reused.`, { code: 'Taken.' });
  throw err;
}

/**
 * Adds a machine (admin): in service, with the default booking rules and weekday opening hours, so it can be
 * booked by people cleared for its group at once. Audited as `machine.created`.
 */
export async function createMachine(actorId: string, input: MachineFields & { code: string }): Promise<Machine> {
  return transaction(async (trx) => {
    await mustHaveGroup(trx, input.groupId);
    let id: string;
    try {
      const [row] = await trx('machines').insert({ code: input.code, ...toColumns(input) }).returning('id');
      id = (row as { id: string }).id;
    } catch (err) {
      duplicateCode(err, input.code);
    }
    await trx('machine_booking_rules').insert({ machine_id: id });
    await trx('opening_hours').insert(NEW_MACHINE_HOURS.map((h) => ({ machine_id: id, ...h })));
    const machine = (await getMachine(id, trx))!;
    await recordAudit(trx, {
      actorId,
      kind: 'machine.created',
      subjectType: 'machine',
      subjectId: id,
      summary: `${machine.name} (${machine.code}) added`,
      after: { code: machine.code, ...fieldsOf(machine) },
    });
    return machine;
  });
}

/** Edits a machine (admin); only the fields given change. Audited as `machine.updated` with before and after. */
export async function updateMachine(actorId: string, id: string, input: Partial<MachineFields>): Promise<Machine> {
  return transaction(async (trx) => {
    const row = (await trx('machines').where({ id }).whereNull('retired_at').forUpdate().first()) as Row | undefined;
    if (!row) throw new DomainError('not_found', 'not_found', 'No machine in use has that id.');
    const before = fieldsOf(toMachine(row));
    if (input.groupId) await mustHaveGroup(trx, input.groupId);
    const merged = { ...before, ...input };
    if (merged.coolantMinC !== null && merged.coolantMaxC !== null && merged.coolantMinC >= merged.coolantMaxC) {
      throw new DomainError('invalid', 'invalid', 'The lowest coolant temperature must be below the highest.', { coolantMaxC: 'Above the lowest.' });
    }
    const changed = Object.fromEntries(Object.entries(input).filter(([k, v]) => v !== undefined && before[k as keyof MachineFields] !== v)) as Partial<MachineFields>;
    if (!Object.keys(changed).length) return toMachine(row);
    await trx('machines').where({ id }).update({ ...toColumns(changed), updated_at: trx.fn.now() });
    const machine = (await getMachine(id, trx))!;
    const after = fieldsOf(machine);
    await recordAudit(trx, {
      actorId,
      kind: 'machine.updated',
      subjectType: 'machine',
      subjectId: id,
      summary: `${machine.name}: ${Object.keys(changed).join(', ')} changed`.slice(0, 500),
      before: Object.fromEntries(Object.keys(changed).map((k) => [k, before[k as keyof MachineFields]])),
      after: Object.fromEntries(Object.keys(changed).map((k) => [k, after[k as keyof MachineFields]])),
    });
    return machine;
  });
}

/** A machine's row as the lock returns it. */
export interface LockedMachine {
  id: string;
  code: string;
  name: string;
  status: MachineStatus;
  retiredAt: Date | null;
  /** the row's other columns, named by `alsoInStatement` (e.g. `payment_failed`) */
  also?: Record<string, unknown>;
}

/**
 * The one machine lock, in the caller's transaction. FOR UPDATE to change the machine (its status, retiring it): a
 * booking being made holds the row FOR SHARE, so it either commits first (and is bumped or cancelled by the change)
 * or waits and then sees the change. FOR SHARE to book or check in on it (bookings/gate.ts lockForBooking). Null when
 * no machine has the id. `alsoInStatement` is a select expression run by the same statement, after the row lock.
 */
export async function lockMachine(trx: Knex.Transaction, id: string, mode: 'update' | 'share' = 'update', alsoInStatement?: Knex.Raw): Promise<LockedMachine | null> {
  const q = trx('machines').where({ id });
  const columns: (string | Knex.Raw)[] = ['id', 'code', 'name', 'status', 'retired_at'];
  // e.g. the booking gate's per-person advisory lock, taken in the same round trip
  if (alsoInStatement) columns.push(alsoInStatement);
  // every booking takes it (with the booking gate's facts): parsed and planned once per connection
  const row = await prepared((mode === 'share' ? q.forShare() : q.forUpdate()).first(...columns));
  return row ? { id: row.id, code: row.code, name: row.name, status: row.status, retiredAt: row.retired_at, ...(alsoInStatement ? { also: row } : {}) } : null;
}
