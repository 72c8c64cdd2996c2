/** Reporting a fault at a machine (anyone signed in): photos stored, the record, the stewards told, the status changed. */
import { randomUUID } from 'node:crypto';
import type { Knex } from 'knex';
import { recordAudit } from '@lib/server/audit';
import { db, transaction } from '@lib/server/db';
import { env } from '@lib/server/env';
import { DomainError } from '@lib/server/errors';
import { queueMail } from '@lib/server/mail';
import { releaseHoldsAfterCancel } from '@lib/server/payments/intents';
import { activeWithRole } from '@lib/server/people';
import { putObject } from '@lib/server/storage';
import type { FaultSeverity, MachineStatus } from '@lib/faults-shared';
import { changeStatus, statusFor } from './machine-status';
import { preparePhotos, type PhotoUpload } from './photos';
import { findMachine, getFault, lockMachineForChange, UUID, type Fault, type FaultPhoto, type MachineRow } from './records';
import type { Actor } from '@lib/roles';

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
  if (row.reported_by !== actor.id) throw new DomainError('conflict', 'client_id_taken', 'That report id belongs to another report. Send the report again.');
  const fault = (await getFault(row.id))!;
  return { fault, machineStatus: fault.machineStatus, bumpedBookings: 0, statusBefore: fault.machineStatus, duplicate: true };
}

/**
 * Files a fault (anyone signed in). Photos are checked, cleaned and stored first; the rest is one transaction.
 * With a `clientId` already filed by the same person, answers that fault and writes and sends nothing.
 */
export async function reportFault(actor: Actor, machineIdOrCode: string, input: FaultInput, photos: readonly PhotoUpload[], now = new Date()): Promise<ReportResult> {
  if (input.clientId !== undefined && !UUID.test(input.clientId)) throw new DomainError('invalid', 'invalid', 'The report id is not a UUID.', { clientId: 'A UUID.' });
  const found = await findMachine(machineIdOrCode);
  if (!found) throw new DomainError('not_found', 'not_found', 'No machine has that id or code.');
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
    const machine = await lockMachineForChange(trx, machineId);
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
      greeting: `Hello ${s.name},`,
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
