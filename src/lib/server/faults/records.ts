/**
 * Faults reported at a machine: the fault records, their notes and photos, the machine looked up by id or code,
 * and its status history. The writes live beside: reporting.ts, triage.ts, machine-status.ts.
 */
import type { Knex } from 'knex';
import { db, type Conn } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { getObject } from '@lib/server/storage';
import { lockMachine } from '@lib/server/machines';
import { hasAnyRole, type Actor } from '@lib/roles';
import type { FaultSeverity, FaultStatus, MachineStatus } from '@lib/faults-shared';
import { MACHINE_CODE_RE } from '@lib/schemas';

export type { FaultSeverity, FaultStatus, MachineStatus } from '@lib/faults-shared';

export interface FaultPhoto {
  key: string;
  bytes: number;
  width: number;
  height: number;
}

export interface Fault {
  id: string;
  machineId: string;
  machineName: string;
  machineCode: string;
  machineStatus: MachineStatus;
  reportedBy: string;
  reporterName: string;
  severity: FaultSeverity;
  summary: string;
  details: string;
  status: FaultStatus;
  photos: FaultPhoto[];
  resolution: string | null;
  resolvedByName: string | null;
  createdAt: Date;
  triagedAt: Date | null;
  resolvedAt: Date | null;
  notes: { authorName: string; body: string; at: Date }[];
}

export interface MachineRow {
  id: string;
  code: string;
  name: string;
  status: MachineStatus;
}

export const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** A machine by id or by its code (the QR label carries the code). */
export async function findMachine(idOrCode: string, trx: Conn = db()): Promise<MachineRow | null> {
  const q = trx('machines').whereNull('retired_at');
  if (UUID.test(idOrCode)) q.where({ id: idOrCode });
  else if (MACHINE_CODE_RE.test(idOrCode)) q.where({ code: idOrCode });
  else return null; // not a code at all (a stray character, U+0000): no look-up
  return ((await q.first('id', 'code', 'name', 'status')) as MachineRow | undefined) ?? null;
}

/** The machine, locked FOR UPDATE (machines.ts lockMachine) before its status changes. */
export async function lockMachineForChange(trx: Knex.Transaction, machineId: string): Promise<MachineRow> {
  const m = await lockMachine(trx, machineId, 'update');
  if (!m) throw new DomainError('not_found', 'not_found', 'No machine has that id or code.');
  return { id: m.id, code: m.code, name: m.name, status: m.status };
}

// ---------------------------------------------------------------------------------------------
// Reading

function faultQuery(trx: Conn) {
  return trx('faults as f')
    .join('machines as m', 'm.id', 'f.machine_id')
    .join('people as r', 'r.id', 'f.reported_by')
    .leftJoin('people as s', 's.id', 'f.resolved_by')
    .select('f.*', 'm.name as machine_name', 'm.code as machine_code', 'm.status as machine_status', 'r.name as reporter_name', 's.name as resolver_name');
}

type FaultRow = {
  id: string; machine_id: string; reported_by: string; severity: FaultSeverity; summary: string; details: string; status: FaultStatus;
  photos: FaultPhoto[]; resolution: string | null; created_at: Date; triaged_at: Date | null; resolved_at: Date | null;
  machine_name: string; machine_code: string; machine_status: MachineStatus; reporter_name: string; resolver_name: string | null;
};

function toFault(r: FaultRow, notes: Fault['notes']): Fault {
  return {
    id: r.id, machineId: r.machine_id, machineName: r.machine_name, machineCode: r.machine_code, machineStatus: r.machine_status,
    reportedBy: r.reported_by, reporterName: r.reporter_name, severity: r.severity, summary: r.summary, details: r.details, status: r.status,
    photos: Array.isArray(r.photos) ? r.photos : [], resolution: r.resolution, resolvedByName: r.resolver_name,
    createdAt: r.created_at, triagedAt: r.triaged_at, resolvedAt: r.resolved_at, notes,
  };
}

async function notesOf(ids: string[], trx: Conn): Promise<Map<string, Fault['notes']>> {
  const map = new Map<string, Fault['notes']>();
  if (!ids.length) return map;
  const rows = await trx('fault_notes as n').join('people as p', 'p.id', 'n.author_id').whereIn('n.fault_id', ids).orderBy('n.created_at').select('n.fault_id', 'n.body', 'n.created_at', 'p.name');
  for (const r of rows) {
    const list = map.get(r.fault_id) ?? [];
    list.push({ authorName: r.name, body: r.body, at: r.created_at });
    map.set(r.fault_id, list);
  }
  return map;
}

export async function getFault(id: string, trx: Conn = db()): Promise<Fault | null> {
  if (!UUID.test(id)) return null;
  const r = (await faultQuery(trx).where('f.id', id).first()) as FaultRow | undefined;
  if (!r) return null;
  return toFault(r, (await notesOf([id], trx)).get(id) ?? []);
}

export interface FaultFilter {
  status?: FaultStatus | 'unresolved';
  machineId?: string;
  severity?: FaultSeverity;
  limit?: number;
}

/** The stewards' queue: unresolved before resolved, `stop` before `degraded` before `note`, oldest first. */
export async function listFaults(filter: FaultFilter = {}, trx: Conn = db()): Promise<Fault[]> {
  const q = faultQuery(trx);
  if (filter.status === 'unresolved') q.whereNot('f.status', 'resolved');
  else if (filter.status) q.where('f.status', filter.status);
  if (filter.machineId) q.where('f.machine_id', filter.machineId);
  if (filter.severity) q.where('f.severity', filter.severity);
  q.orderByRaw(`(f.status = 'resolved'), CASE f.severity WHEN 'stop' THEN 0 WHEN 'degraded' THEN 1 ELSE 2 END, f.created_at`);
  q.limit(filter.limit ?? 200);
  const rows = (await q) as FaultRow[];
  const notes = await notesOf(rows.map((r) => r.id), trx);
  return rows.map((r) => toFault(r, notes.get(r.id) ?? []));
}

/** Open faults of one machine (for the machine page). */
export async function openFaultsOf(machineId: string): Promise<Fault[]> {
  return listFaults({ machineId, status: 'unresolved' });
}

/** A stored photo of a fault: stewards and admins, and the person who reported it. Others get 404. */
export async function faultPhoto(viewer: Actor, faultId: string, n: number): Promise<{ bytes: Uint8Array; contentType: string }> {
  const f = await getFault(faultId);
  const allowed = f && (f.reportedBy === viewer.id || hasAnyRole(viewer.roles, ['steward', 'admin']));
  const photo = allowed ? f.photos[n - 1] : undefined;
  if (!photo) throw new DomainError('not_found', 'not_found', 'No such photo.');
  const obj = await getObject(photo.key);
  if (!obj) throw new DomainError('not_found', 'not_found', 'No such photo.');
  return obj;
}

export async function openFaultCounts(trx: Conn, machineId: string): Promise<{ stop: { id: string; summary: string }[]; all: number }> {
  const rows = (await trx('faults').where({ machine_id: machineId }).whereNot('status', 'resolved').orderBy('created_at').select('id', 'severity', 'summary')) as { id: string; severity: FaultSeverity; summary: string }[];
  return { stop: rows.filter((r) => r.severity === 'stop'), all: rows.length };
}

/** A machine's status history, newest first (time out of service in reports). */
export async function statusHistory(machineId: string, limit = 50): Promise<{ from: MachineStatus; to: MachineStatus; at: Date; reason: string; actorName: string | null; faultId: string | null }[]> {
  const rows = await db()('machine_status_changes as c').leftJoin('people as p', 'p.id', 'c.actor_id').where('c.machine_id', machineId)
    .orderBy('c.changed_at', 'desc').limit(limit).select('c.*', 'p.name as actor_name');
  return rows.map((r: Record<string, any>) => ({ from: r.from_status, to: r.to_status, at: r.changed_at, reason: r.reason, actorName: r.actor_name, faultId: r.fault_id }));
}
