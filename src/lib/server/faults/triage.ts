/** Steward work on a fault: triage (a change to `stop` takes the machine out of service), notes, resolving. */
import { recordAudit } from '@lib/server/audit';
import { transaction } from '@lib/server/db';
import { env } from '@lib/server/env';
import { DomainError } from '@lib/server/errors';
import { queueMail } from '@lib/server/mail';
import { releaseHoldsAfterCancel } from '@lib/server/payments/intents';
import type { FaultSeverity, MachineStatus } from '@lib/faults-shared';
import { changeStatus, returnToService, statusFor, type ReturnChecklist } from './machine-status';
import { getFault, lockMachineForChange, openFaultCounts, type Fault, type FaultStatus, type MachineRow } from './records';
import type { Knex } from 'knex';
import type { Conn } from '@lib/server/db';
import type { Actor } from '@lib/roles';

export interface TriageInput {
  severity?: FaultSeverity;
  note?: string;
}

/** Triage (steward, admin): marks the fault triaged, may change its severity (a change to `stop` takes the machine out of service), adds a note. */
export async function triageFault(actor: Actor, id: string, input: TriageInput, now = new Date()): Promise<Fault> {
  const bumped = await transaction(async (trx) => {
    const f = await trx('faults').where({ id }).forUpdate().first();
    if (!f) throw new DomainError('not_found', 'not_found', 'No such fault.');
    if (f.status === 'resolved') throw new DomainError('conflict', 'fault_resolved', 'This fault is resolved; report a new one if the problem is back.');
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
      const machine = await lockMachineForChange(trx, f.machine_id);
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
    if (!f) throw new DomainError('not_found', 'not_found', 'No such fault.');
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
    if (!f) throw new DomainError('not_found', 'not_found', 'No such fault.');
    if (f.status === 'resolved') throw new DomainError('conflict', 'fault_resolved', 'This fault is already resolved.');
    const machine = await lockMachineForChange(trx, f.machine_id);
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
      greeting: `Hello ${f.reporter_name},`,
      paragraphs: [`Thank you for reporting “${f.summary}”. A steward resolved it: ${resolution}`],
      action: { label: 'Book time', url: `${env().PUBLIC_BASE_URL}/book` },
    });
    let bumped: string[] = [];
    let changed = false;
    if (opts.returnToService) {
      if (machine.status !== 'out of service') throw new DomainError('conflict', 'status_unchanged', `${machine.name} is not out of service; resolve the fault on its own.`);
      const r = await returnToService(trx, actor, machine, { reason: `Fault resolved: ${resolution}`, checklist: opts.returnToService.checklist }, now);
      bumped = r.bumped;
      changed = true;
    }
    return { outcome: await outcomeOf(trx, machine, changed), bumped };
  });
  await releaseHoldsAfterCancel(bumped, 'machine out of service', actor.id);
  return { ...(await getFault(id))!, outcome };
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
      greeting: `Hello ${f.reporter_name},`,
      paragraphs: [`Thank you for reporting “${f.summary}”. ${machine.name} has been retired, so the fault is closed. The reason given: ${reason}`],
    });
  }
  return open.map((f) => f.id);
}
