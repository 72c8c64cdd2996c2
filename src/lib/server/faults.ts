/**
 * Faults reported at a machine, the machine's status (in service / degraded / out of service) and its history.
 * All SQL of this area.
 *
 * A `stop` fault takes the machine out of service in the same transaction as the report: the status change row,
 * every reserved booking that has not ended becomes `bumped` (audited), the bumped people and the stewards are
 * e-mailed (queued in the transaction). Card holds of bumped bookings are released after the commit (payments.ts
 * talks to the provider, which must not happen inside a transaction). A `degraded` fault marks the machine
 * degraded and keeps its bookings.
 */
import { randomUUID } from 'node:crypto';
import type { Knex } from 'knex';
import sharp from 'sharp';
import { db, transaction } from './db';
import { recordAudit } from './audit';
import { HttpError } from './errors';
import { queueMail } from './mail';
import { env } from './env';
import { checkUpload } from './file-types';
import { getObject, putObject } from './storage';
import { cancellationAttachment, offerFreedTime, raiseSequence } from './bookings';
import { releaseHoldsAfterCancel } from './payments';
import { recordPaymentIntent } from './payment-intents';
import { activeWithRole } from './people';
import { hasAnyRole, type Role } from '../roles';
import type { FaultSeverity, FaultStatus, MachineStatus } from '../faults-shared';

export type { FaultSeverity, FaultStatus, MachineStatus } from '../faults-shared';

type Conn = Knex | Knex.Transaction;

/** At most this many photos per report, each at most this many bytes before re-encoding. */
export const MAX_PHOTOS = 3;
export const PHOTO_MAX_BYTES = 8 * 1024 * 1024;
const PHOTO_TYPES = ['image/jpeg', 'image/png', 'image/webp', 'image/gif', 'image/heic', 'image/avif', 'image/tiff'] as const;
/** Stored photos are re-encoded to JPEG no larger than this on their long side. */
const PHOTO_MAX_SIDE = 2000;

export interface Actor {
  id: string;
  roles: readonly Role[];
}

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

interface MachineRow {
  id: string;
  code: string;
  name: string;
  status: MachineStatus;
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** A machine by id or by its code (the QR label carries the code). */
export async function findMachine(idOrCode: string, trx: Conn = db()): Promise<MachineRow | null> {
  const q = trx('machines').whereNull('retired_at');
  if (UUID.test(idOrCode)) q.where({ id: idOrCode });
  else q.where({ code: idOrCode });
  return ((await q.first('id', 'code', 'name', 'status')) as MachineRow | undefined) ?? null;
}

async function lockMachine(trx: Knex.Transaction, machineId: string): Promise<MachineRow> {
  // FOR UPDATE: a booking being created (FOR SHARE on the machine) either commits first — and is bumped here —
  // or waits and then sees the machine out of service
  const m = (await trx('machines').where({ id: machineId }).forUpdate().first('id', 'code', 'name', 'status')) as MachineRow | undefined;
  if (!m) throw new HttpError(404, 'machine_not_found', 'No machine has that id or code.');
  return m;
}

async function siteZone(trx: Conn): Promise<string> {
  const row = await trx('site_settings').where({ id: 1 }).first('time_zone');
  return (row?.time_zone as string | undefined) ?? 'UTC';
}

function formatRange(startsAt: Date, endsAt: Date, tz: string): string {
  const day = new Intl.DateTimeFormat('en-NZ', { timeZone: tz, weekday: 'long', day: 'numeric', month: 'long' }).format(startsAt);
  const t = new Intl.DateTimeFormat('en-NZ', { timeZone: tz, hour: '2-digit', minute: '2-digit', hourCycle: 'h23' });
  return `${day}, ${t.format(startsAt)}–${t.format(endsAt)}`;
}


// ---------------------------------------------------------------------------------------------
// Photos

export interface PhotoUpload {
  bytes: Uint8Array;
}

/**
 * Checks and re-encodes the photos of a report: at most three, each an image by its content (programs and
 * SVG refused), at most 8 MB. Re-encoding to JPEG with sharp drops every metadata block (EXIF with its GPS
 * position, XMP, IPTC); the orientation is applied to the pixels first so the photo still stands upright.
 */
export async function preparePhotos(photos: readonly PhotoUpload[]): Promise<{ bytes: Buffer; width: number; height: number }[]> {
  if (photos.length > MAX_PHOTOS) {
    throw new HttpError(422, 'too_many_photos', `Attach at most ${MAX_PHOTOS} photos.`, { photos: `At most ${MAX_PHOTOS} photos.` });
  }
  const out = [];
  for (const [i, p] of photos.entries()) {
    await checkUpload(p.bytes, PHOTO_TYPES, `photo ${i + 1}`, PHOTO_MAX_BYTES);
    try {
      const { data, info } = await sharp(p.bytes, { limitInputPixels: 60_000_000 })
        .rotate()
        .resize({ width: PHOTO_MAX_SIDE, height: PHOTO_MAX_SIDE, fit: 'inside', withoutEnlargement: true })
        .jpeg({ quality: 82, mozjpeg: true })
        .toBuffer({ resolveWithObject: true });
      out.push({ bytes: data, width: info.width, height: info.height });
    } catch {
      throw new HttpError(415, 'file_type_refused', `Photo ${i + 1} could not be read as an image.`, { photos: `Photo ${i + 1} is not a readable image.` });
    }
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Status changes and the stop cascade

interface Effects {
  bumped: string[];
}

/**
 * Writes a status change (machine row + history row + audit) in `trx`. Going `out of service` bumps every
 * reserved booking on the machine that has not ended and e-mails the people bumped.
 */
async function changeStatus(
  trx: Knex.Transaction,
  machine: MachineRow,
  to: MachineStatus,
  ctx: { actorId: string | null; faultId: string | null; reason: string; now: Date },
): Promise<Effects> {
  if (machine.status === to) return { bumped: [] };
  await trx('machines').where({ id: machine.id }).update({ status: to, updated_at: trx.fn.now() });
  await trx('machine_status_changes').insert({
    machine_id: machine.id, from_status: machine.status, to_status: to, changed_at: ctx.now, actor_id: ctx.actorId, fault_id: ctx.faultId, reason: ctx.reason,
  });
  await recordAudit(trx, {
    actorId: ctx.actorId,
    kind: 'machine.status_changed',
    subjectType: 'machine',
    subjectId: machine.id,
    summary: `${machine.name}: ${machine.status} → ${to}. ${ctx.reason}`.slice(0, 500),
    before: { status: machine.status },
    after: { status: to, reason: ctx.reason, faultId: ctx.faultId },
  });
  const from = machine.status;
  machine.status = to;
  if (to === 'out of service') return { bumped: await bumpBookings(trx, machine, ctx) };
  if (to === 'in service' && from === 'out of service') await offerBumpedTime(trx, machine.id, ctx.now);
  return { bumped: [] };
}

async function bumpBookings(trx: Knex.Transaction, machine: MachineRow, ctx: { actorId: string | null; reason: string; now: Date }): Promise<string[]> {
  const rows = (await trx('bookings as b')
    .join('people as p', 'p.id', 'b.person_id')
    .where({ 'b.machine_id': machine.id, 'b.state': 'reserved' })
    .where('b.ends_at', '>', ctx.now)
    .orderBy('b.starts_at')
    .forUpdate('b')
    .select('b.id', 'b.kind', 'b.course_name', 'b.starts_at', 'b.ends_at', 'b.calendar_sequence', 'b.person_id', 'p.email', 'p.name')) as {
    id: string; kind: string; course_name: string | null; starts_at: Date; ends_at: Date; calendar_sequence: number; person_id: string; email: string; name: string;
  }[];
  if (!rows.length) return [];
  const tz = await siteZone(trx);
  const site = await trx('site_settings').where({ id: 1 }).first('name');
  await trx('bookings').whereIn('id', rows.map((r) => r.id)).update({ state: 'bumped', calendar_sequence: raiseSequence(trx), updated_at: trx.fn.now() });
  for (const r of rows) {
    if (r.kind === 'hold') await trx('waitlist_entries').where({ hold_booking_id: r.id }).update({ state: 'expired' });
    await recordAudit(trx, {
      actorId: ctx.actorId,
      kind: 'booking.bumped',
      subjectType: 'booking',
      subjectId: r.id,
      summary: `Bumped: ${machine.name} is out of service`,
      before: { state: 'reserved' },
      after: { state: 'bumped' },
    });
    // the machine is out of service now, so offerFreedTime offers nothing on it until it is back (see offerBumpedTime)
    await offerFreedTime(trx, machine.id, { start: r.starts_at > ctx.now ? r.starts_at : ctx.now, end: r.ends_at }, ctx.now);
    await recordPaymentIntent(trx, { kind: 'booking.release', bookingId: r.id, reason: `${machine.name} is out of service`, notify: false, actorId: ctx.actorId });
    if (r.kind === 'hold') continue;
    await queueMail(trx, r.email, `Your booking on ${machine.name} is cancelled: the machine is out of service`, {
      greeting: `Kia ora ${r.name},`,
      paragraphs: [
        `${machine.name} was taken out of service after a fault was reported, so your booking on ${formatRange(r.starts_at, r.ends_at, tz)} cannot go ahead.`,
        'You are not charged for it: any hold on your card is released.',
        'Book another time or another machine when it suits you.',
        'The attached calendar file removes it from your calendar.',
      ],
      action: { label: 'Book another time', url: `${env().PUBLIC_BASE_URL}/book` },
    }, [cancellationAttachment({ ...r, calendar_sequence: r.calendar_sequence + 1 }, machine.name, site?.name ?? 'Beamwarden')]);
  }
  return rows.map((r) => r.id);
}

/** Back in service: future time freed by bumped bookings is offered to the people waiting for it. */
async function offerBumpedTime(trx: Knex.Transaction, machineId: string, now: Date): Promise<void> {
  const rows = await trx('bookings')
    .where({ machine_id: machineId, state: 'bumped' })
    .where('ends_at', '>', now)
    .orderBy('starts_at')
    .select('starts_at', 'ends_at');
  for (const r of rows) await offerFreedTime(trx, machineId, { start: r.starts_at > now ? r.starts_at : now, end: r.ends_at }, now);
}

/** The status a fault of `severity` asks for, given the machine's status now (never raises a machine's status). */
function statusFor(severity: FaultSeverity, current: MachineStatus): MachineStatus {
  if (severity === 'stop') return 'out of service';
  if (severity === 'degraded' && current === 'in service') return 'degraded';
  return current;
}

// ---------------------------------------------------------------------------------------------
// Reporting

export interface FaultInput {
  summary: string;
  details: string;
  severity: FaultSeverity;
  /** The id the reporter's phone made for this report (a queued report may be sent twice); stored once. */
  clientId?: string;
}

export interface ReportResult {
  fault: Fault;
  machineStatus: MachineStatus;
  bumpedBookings: number;
  /** The machine's status just before this report (a stop fault on a machine already out of service: someone was first). */
  statusBefore: MachineStatus;
  /** True when this clientId was filed before: `fault` is that report, nothing new was written or sent. */
  duplicate: boolean;
}

/** The report already filed under a client id, or null. Someone else's client id is refused. */
async function byClientId(actor: Actor, clientId: string): Promise<ReportResult | null> {
  const row = await db()('faults').where({ client_id: clientId }).first('id', 'reported_by');
  if (!row) return null;
  if (row.reported_by !== actor.id) throw new HttpError(409, 'client_id_taken', 'That report id belongs to another report. Send the report again.');
  const fault = (await getFault(row.id))!;
  return { fault, machineStatus: fault.machineStatus, bumpedBookings: 0, statusBefore: fault.machineStatus, duplicate: true };
}

/**
 * Files a fault (anyone signed in). Photos are checked, cleaned and stored first; the rest is one transaction.
 * With a `clientId` already filed by the same person, answers that fault and writes and sends nothing.
 */
export async function reportFault(actor: Actor, machineIdOrCode: string, input: FaultInput, photos: readonly PhotoUpload[], now = new Date()): Promise<ReportResult> {
  if (input.clientId !== undefined && !UUID.test(input.clientId)) throw new HttpError(422, 'invalid', 'The report id is not a UUID.', { clientId: 'A UUID.' });
  const found = await findMachine(machineIdOrCode);
  if (!found) throw new HttpError(404, 'machine_not_found', 'No machine has that id or code.');
  if (input.clientId) {
    const earlier = await byClientId(actor, input.clientId);
    if (earlier) return earlier;
  }
  const cleaned = await preparePhotos(photos);
  const faultId = randomUUID();
  const stored: FaultPhoto[] = [];
  for (const [i, p] of cleaned.entries()) {
    const key = `faults/${faultId}/${i + 1}.jpg`;
    await putObject(key, p.bytes, 'image/jpeg');
    stored.push({ key, bytes: p.bytes.byteLength, width: p.width, height: p.height });
  }
  let written: { bumped: string[]; status: MachineStatus; before: MachineStatus };
  try {
    written = await fileFault(actor, found.id, faultId, input, stored, now);
  } catch (err) {
    // the same clientId sent twice at once: the unique index lets one through; the other answers that one
    const pgErr = err as { code?: string; constraint?: string };
    if (input.clientId && pgErr.code === '23505' && pgErr.constraint === 'faults_client_id_unique') {
      // (its photos stay stored under the losing id, unreferenced: storage has no delete yet)
      const earlier = await byClientId(actor, input.clientId);
      if (earlier) return earlier;
    }
    throw err;
  }
  await releaseHoldsAfterCancel(written.bumped, `${found.name} is out of service`, actor.id);
  return { fault: (await getFault(faultId))!, machineStatus: written.status, bumpedBookings: written.bumped.length, statusBefore: written.before, duplicate: false };
}

async function fileFault(actor: Actor, machineId: string, faultId: string, input: FaultInput, stored: FaultPhoto[], now: Date) {
  return transaction(async (trx) => {
    const machine = await lockMachine(trx, machineId);
    const before = machine.status;
    const reporter = await trx('people').where({ id: actor.id }).first('name', 'email');
    await trx('faults').insert({
      id: faultId, machine_id: machine.id, reported_by: actor.id, severity: input.severity, summary: input.summary, details: input.details,
      photos: JSON.stringify(stored), created_at: now, client_id: input.clientId ?? null,
    });
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'fault.reported',
      subjectType: 'fault',
      subjectId: faultId,
      summary: `${input.severity} fault on ${machine.name}: ${input.summary}`.slice(0, 500),
      after: { machineId: machine.id, severity: input.severity, photos: stored.length },
    });
    const to = statusFor(input.severity, machine.status);
    const effects = await changeStatus(trx, machine, to, { actorId: actor.id, faultId, reason: `${input.severity} fault: ${input.summary}`, now });
    if (input.severity !== 'note') {
      await mailStewards(trx, machine, { id: faultId, severity: input.severity, summary: input.summary, details: input.details, reporter: reporter?.name ?? 'someone' }, effects.bumped.length);
    }
    return { bumped: effects.bumped, status: machine.status, before };
  });
}

async function mailStewards(
  trx: Knex.Transaction,
  machine: MachineRow,
  f: { id: string; severity: FaultSeverity; summary: string; details: string; reporter: string },
  bumped: number,
): Promise<void> {
  const stop = f.severity === 'stop';
  for (const s of await activeWithRole('steward', trx)) {
    await queueMail(trx, s.email, `${stop ? 'STOP' : 'Degraded'}: ${machine.name} — ${f.summary}`.slice(0, 200), {
      greeting: `Kia ora ${s.name},`,
      paragraphs: [
        `${f.reporter} reported a ${f.severity} fault on ${machine.name}: “${f.summary}”.`,
        ...(f.details ? [f.details] : []),
        stop
          ? `${machine.name} is out of service now. ${bumped} booking${bumped === 1 ? ' was' : 's were'} bumped and the people told. Put it back into service from the Faults screen once it is safe.`
          : `${machine.name} stays bookable, marked degraded. Triage the fault on the Faults screen.`,
      ],
      action: { label: 'Open the Faults screen', url: `${env().PUBLIC_BASE_URL}/faults` },
      footnote: 'Class 4 laser: do not fire a machine with a suspected optical, cooling or interlock fault. Follow the manufacturer’s manual and your laser safety officer.',
    });
  }
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
  if (!photo) throw new HttpError(404, 'not_found', 'No such photo.');
  const obj = await getObject(photo.key);
  if (!obj) throw new HttpError(404, 'not_found', 'No such photo.');
  return obj;
}

// ---------------------------------------------------------------------------------------------
// Steward work: triage, notes, resolve, status

export interface TriageInput {
  severity?: FaultSeverity;
  note?: string;
}

/** Triage (steward, admin): marks the fault triaged, may change its severity (a change to `stop` takes the machine out of service), adds a note. */
export async function triageFault(actor: Actor, id: string, input: TriageInput, now = new Date()): Promise<Fault> {
  const bumped = await transaction(async (trx) => {
    const f = await trx('faults').where({ id }).forUpdate().first();
    if (!f) throw new HttpError(404, 'not_found', 'No such fault.');
    if (f.status === 'resolved') throw new HttpError(409, 'fault_resolved', 'This fault is resolved; report a new one if the problem is back.');
    const severity = input.severity ?? (f.severity as FaultSeverity);
    await trx('faults').where({ id }).update({ status: 'triaged', severity, triaged_at: f.triaged_at ?? now });
    if (input.note) await trx('fault_notes').insert({ fault_id: id, author_id: actor.id, body: input.note, created_at: now });
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'fault.triaged',
      subjectType: 'fault',
      subjectId: id,
      summary: `Fault triaged${severity !== f.severity ? `: severity ${f.severity} → ${severity}` : ''}${input.note ? `. ${input.note}` : ''}`.slice(0, 500),
      before: { status: f.status, severity: f.severity },
      after: { status: 'triaged', severity },
    });
    let out: string[] = [];
    if (severity !== f.severity && severity !== 'note') {
      const machine = await lockMachine(trx, f.machine_id);
      const to = statusFor(severity, machine.status);
      out = (await changeStatus(trx, machine, to, { actorId: actor.id, faultId: id, reason: `Triaged as ${severity}: ${f.summary}`, now })).bumped;
    }
    return out;
  });
  await releaseHoldsAfterCancel(bumped, 'machine out of service', actor.id);
  return (await getFault(id))!;
}

/** Adds a steward's note to a fault. */
export async function addFaultNote(actor: Actor, id: string, body: string, now = new Date()): Promise<Fault> {
  await transaction(async (trx) => {
    const f = await trx('faults').where({ id }).first('id');
    if (!f) throw new HttpError(404, 'not_found', 'No such fault.');
    await trx('fault_notes').insert({ fault_id: id, author_id: actor.id, body, created_at: now });
    await recordAudit(trx, { actorId: actor.id, kind: 'fault.noted', subjectType: 'fault', subjectId: id, summary: body.slice(0, 500) });
  });
  return (await getFault(id))!;
}

/** What resolving a fault did to its machine, and what is left to do before it is back in normal service. */
export interface ResolveOutcome {
  machineName: string;
  machineStatus: MachineStatus;
  statusChanged: boolean;
  openStopFaults: number;
  openFaults: number;
  /** One plain sentence: what changed and the next step. */
  next: string;
}

export interface ResolveOptions {
  /** Resolve and return to service in one step (the machine is out of service and this is its last open stop fault). */
  returnToService?: { checklist: Partial<ReturnChecklist> };
}

/**
 * Resolves a fault with what was done (steward, admin); the reporter is told. With `returnToService`, the machine
 * goes back into service in the same transaction (checks confirmed; refused while another stop fault is open).
 * The outcome says whether the machine's status changed and what is left.
 */
export async function resolveFault(actor: Actor, id: string, resolution: string, now = new Date(), opts: ResolveOptions = {}): Promise<Fault & { outcome: ResolveOutcome }> {
  const { outcome, bumped } = await transaction(async (trx) => {
    const f = await trx('faults as f').join('people as p', 'p.id', 'f.reported_by').join('machines as m', 'm.id', 'f.machine_id').where('f.id', id).forUpdate('f')
      .first('f.*', 'p.email', 'p.name as reporter_name', 'm.name as machine_name');
    if (!f) throw new HttpError(404, 'not_found', 'No such fault.');
    if (f.status === 'resolved') throw new HttpError(409, 'fault_resolved', 'This fault is already resolved.');
    const machine = await lockMachine(trx, f.machine_id);
    await trx('faults').where({ id }).update({ status: 'resolved', resolution, resolved_by: actor.id, resolved_at: now, triaged_at: f.triaged_at ?? now });
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'fault.resolved',
      subjectType: 'fault',
      subjectId: id,
      summary: `Fault on ${f.machine_name} resolved: ${resolution}`.slice(0, 500),
      before: { status: f.status },
      after: { status: 'resolved', resolution },
    });
    await queueMail(trx, f.email, `The fault you reported on ${f.machine_name} is resolved`, {
      greeting: `Kia ora ${f.reporter_name},`,
      paragraphs: [`Thank you for reporting “${f.summary}”. A steward resolved it: ${resolution}`],
      action: { label: 'Book time', url: `${env().PUBLIC_BASE_URL}/book` },
    });
    let bumped: string[] = [];
    let changed = false;
    if (opts.returnToService) {
      if (machine.status !== 'out of service') throw new HttpError(409, 'status_unchanged', `${machine.name} is not out of service; resolve the fault on its own.`);
      const r = await returnToService(trx, actor, machine, { reason: `Fault resolved: ${resolution}`, checklist: opts.returnToService.checklist }, now);
      bumped = r.bumped;
      changed = true;
    }
    return { outcome: await outcomeOf(trx, machine, changed), bumped };
  });
  await releaseHoldsAfterCancel(bumped, 'machine out of service', actor.id);
  return { ...(await getFault(id))!, outcome };
}

async function openFaultCounts(trx: Conn, machineId: string): Promise<{ stop: { id: string; summary: string }[]; all: number }> {
  const rows = (await trx('faults').where({ machine_id: machineId }).whereNot('status', 'resolved').orderBy('created_at').select('id', 'severity', 'summary')) as { id: string; severity: FaultSeverity; summary: string }[];
  return { stop: rows.filter((r) => r.severity === 'stop'), all: rows.length };
}

async function outcomeOf(trx: Conn, machine: MachineRow, statusChanged: boolean): Promise<ResolveOutcome> {
  const open = await openFaultCounts(trx, machine.id);
  const n = (k: number, what: string) => `${k} open ${what}${k === 1 ? '' : 's'}`;
  let next: string;
  if (statusChanged) next = `${machine.name} is ${machine.status === 'degraded' ? 'back in use, marked degraded' : 'back in service'}.${open.all ? ` ${n(open.all, 'fault')} left on it.` : ''}`;
  else if (machine.status === 'out of service' && open.stop.length) next = `${machine.name} stays out of service: ${n(open.stop.length, 'stop fault')} left to resolve.`;
  else if (machine.status === 'out of service') next = `${machine.name} is still out of service: no stop fault is left, so put it back into service with the checks when it is safe.`;
  else next = `${machine.name} stays ${machine.status}.${open.all ? ` ${n(open.all, 'fault')} left on it.` : ' No open faults are left on it.'}`;
  return { machineName: machine.name, machineStatus: machine.status, statusChanged, openStopFaults: open.stop.length, openFaults: open.all, next };
}

/** The checks a steward confirms before a machine goes back into service. */
export const RETURN_CHECKLIST = {
  causeFixed: 'The cause of the fault is fixed or made safe',
  interlocksTested: 'Lid interlock and emergency stop tested',
  coolingAndExtraction: 'Cooling and extraction run normally',
  testFire: 'A low-power test job ran attended, without trouble',
} as const;
export type ReturnChecklist = Record<keyof typeof RETURN_CHECKLIST, boolean>;

export interface StatusInput {
  status: MachineStatus;
  reason: string;
  checklist?: Partial<ReturnChecklist>;
}

/**
 * Sets a machine's status (steward, admin) with a reason, audited. Back into service from out of service is refused
 * while a `stop` fault on it is open and needs every item of RETURN_CHECKLIST; the people who reported its recent
 * `stop` faults are told.
 */
export async function setMachineStatus(actor: Actor, machineIdOrCode: string, input: StatusInput, now = new Date()): Promise<{ machineId: string; status: MachineStatus; bumpedBookings: number }> {
  const found = await findMachine(machineIdOrCode);
  if (!found) throw new HttpError(404, 'machine_not_found', 'No machine has that id or code.');
  const result = await transaction(async (trx) => {
    const machine = await lockMachine(trx, found.id);
    if (machine.status === input.status) throw new HttpError(409, 'status_unchanged', `${machine.name} is already ${input.status}.`);
    if (input.status !== 'out of service' && machine.status === 'out of service') {
      const r = await returnToService(trx, actor, machine, { reason: input.reason, checklist: input.checklist ?? {}, to: input.status }, now);
      return { machineId: machine.id, status: machine.status, bumped: r.bumped };
    }
    const effects = await changeStatus(trx, machine, input.status, { actorId: actor.id, faultId: null, reason: input.reason, now });
    if (input.status === 'in service' || input.status === 'degraded') await tellStopReporters(trx, machine, input.status, input.reason);
    return { machineId: machine.id, status: machine.status, bumped: effects.bumped };
  });
  await releaseHoldsAfterCancel(result.bumped, `${found.name} is out of service`, actor.id);
  return { machineId: result.machineId, status: result.status, bumpedBookings: result.bumped.length };
}

/**
 * Out of service → back in use, inside `trx` with the machine locked: refused (409 open_stop_fault, naming it)
 * while a `stop` fault on the machine is unresolved, and (422 checklist_incomplete) until every check is confirmed.
 * Without an explicit `to`, the machine comes back `degraded` when a degraded fault is still open, else `in service`.
 */
async function returnToService(
  trx: Knex.Transaction,
  actor: Actor,
  machine: MachineRow,
  input: { reason: string; checklist: Partial<ReturnChecklist>; to?: MachineStatus },
  now: Date,
): Promise<{ bumped: string[] }> {
  const open = await openFaultCounts(trx, machine.id);
  if (open.stop.length) {
    const names = open.stop.map((f) => `“${f.summary}”`).join(', ');
    throw new HttpError(409, 'open_stop_fault',
      `${machine.name} has ${open.stop.length === 1 ? 'an open stop fault' : `${open.stop.length} open stop faults`}: ${names}. Resolve ${open.stop.length === 1 ? 'it' : 'them'} first, or use “Resolve and return to service” on the last one.`,
      { faults: open.stop.map((f) => f.id).join(',') });
  }
  const missing = (Object.keys(RETURN_CHECKLIST) as (keyof ReturnChecklist)[]).filter((k) => input.checklist[k] !== true);
  if (missing.length) {
    throw new HttpError(422, 'checklist_incomplete', 'Confirm every check before the machine goes back into service.',
      Object.fromEntries(missing.map((k) => [`checklist.${k}`, `Confirm: ${RETURN_CHECKLIST[k]}.`])));
  }
  const degradedLeft = await trx('faults').where({ machine_id: machine.id, severity: 'degraded' }).whereNot('status', 'resolved').first('id');
  const to: MachineStatus = input.to ?? (degradedLeft ? 'degraded' : 'in service');
  const reason = `${input.reason} (checks confirmed: ${Object.keys(RETURN_CHECKLIST).join(', ')})`;
  const effects = await changeStatus(trx, machine, to, { actorId: actor.id, faultId: null, reason, now });
  await tellStopReporters(trx, machine, to, input.reason);
  return { bumped: effects.bumped };
}

/** The people who reported the machine's recent `stop` faults are told it is back. */
async function tellStopReporters(trx: Knex.Transaction, machine: MachineRow, to: MachineStatus, note: string): Promise<void> {
  const reporters = await trx('faults as f').join('people as p', 'p.id', 'f.reported_by')
    .where({ 'f.machine_id': machine.id, 'f.severity': 'stop' })
    .where((w) => w.whereNot('f.status', 'resolved').orWhere('f.resolved_at', '>=', trx.raw("now() - interval '7 days'")))
    .distinct('p.email', 'p.name');
  for (const r of reporters as { email: string; name: string }[]) {
    await queueMail(trx, r.email, `${machine.name} is back in service`, {
      greeting: `Kia ora ${r.name},`,
      paragraphs: [`${machine.name}, which you reported out of service, is back ${to === 'degraded' ? 'in use, marked degraded' : 'in service'}. Steward’s note: ${note}`],
      action: { label: 'Book time', url: `${env().PUBLIC_BASE_URL}/book` },
    });
  }
}

/** A machine's status history, newest first (time out of service in reports). */
export async function statusHistory(machineId: string, limit = 50): Promise<{ from: MachineStatus; to: MachineStatus; at: Date; reason: string; actorName: string | null; faultId: string | null }[]> {
  const rows = await db()('machine_status_changes as c').leftJoin('people as p', 'p.id', 'c.actor_id').where('c.machine_id', machineId)
    .orderBy('c.changed_at', 'desc').limit(limit).select('c.*', 'p.name as actor_name');
  return rows.map((r: Record<string, any>) => ({ from: r.from_status, to: r.to_status, at: r.changed_at, reason: r.reason, actorName: r.actor_name, faultId: r.fault_id }));
}

/**
 * Closes the open faults of a machine that is being retired, inside the retire cascade's transaction: each is
 * resolved "Machine retired: <reason>" by the admin retiring it (so it leaves the stewards' queue), audited as
 * `fault.resolved` with `closedBy: 'machine retired'`, and its reporter is told. Returns the faults' ids.
 */
export async function closeFaultsOfRetiredMachine(trx: Knex.Transaction, actorId: string, machine: { id: string; name: string }, reason: string, now: Date): Promise<string[]> {
  const open = (await trx('faults as f').join('people as p', 'p.id', 'f.reported_by').where('f.machine_id', machine.id).whereNot('f.status', 'resolved')
    .forUpdate('f').orderBy('f.created_at').select('f.id', 'f.status', 'f.summary', 'f.triaged_at', 'p.email', 'p.name as reporter_name')) as
    { id: string; status: FaultStatus; summary: string; triaged_at: Date | null; email: string; reporter_name: string }[];
  const resolution = `Machine retired: ${reason}`;
  for (const f of open) {
    await trx('faults').where({ id: f.id }).update({ status: 'resolved', resolution, resolved_by: actorId, resolved_at: now, triaged_at: f.triaged_at ?? now });
    await recordAudit(trx, {
      actorId,
      kind: 'fault.resolved',
      subjectType: 'fault',
      subjectId: f.id,
      summary: `Fault on ${machine.name} closed because the machine was retired: ${f.summary}`.slice(0, 500),
      before: { status: f.status },
      after: { status: 'resolved', resolution, closedBy: 'machine retired' },
    });
    await queueMail(trx, f.email, `The fault you reported on ${machine.name} is closed`, {
      greeting: `Kia ora ${f.reporter_name},`,
      paragraphs: [`Thank you for reporting “${f.summary}”. ${machine.name} has been retired, so the fault is closed. The reason given: ${reason}`],
    });
  }
  return open.map((f) => f.id);
}
