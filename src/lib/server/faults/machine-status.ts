/**
 * A machine's status (in service / degraded / out of service): every change, and the stop cascade.
 *
 * A `stop` fault takes the machine out of service in the same transaction as the report: the status change row,
 * every reserved booking that has not ended becomes `bumped` (audited), the bumped people and the stewards are
 * e-mailed (queued in the transaction). Card holds of bumped bookings are released after the commit (payments/
 * talks to the provider, which must not happen inside a transaction). A `degraded` fault marks the machine
 * degraded and keeps its bookings.
 */
import type { Knex } from 'knex';
import { recordAudit } from '@lib/server/audit';
import { findMachine, lockMachineForChange, openFaultCounts, type MachineRow } from './records';
import { transaction } from '@lib/server/db';
import { env } from '@lib/server/env';
import { DomainError } from '@lib/server/errors';
import { queueMail } from '@lib/server/mail';
import { releaseHoldsAfterCancel } from '@lib/server/payments/intents';
import { cancellationAttachment, formatRange } from '@lib/server/bookings/messages';
import { endFutureBookings } from '@lib/server/bookings/cancel';
import { offerFreedTime } from '@lib/server/bookings/waitlist';
import type { FaultSeverity, MachineStatus } from '@lib/faults-shared';
import type { Actor } from '@lib/roles';
import { getSettings } from '@lib/server/settings';

interface Effects {
  bumped: string[];
}

/**
 * Writes a status change (machine row + history row + audit) in `trx`. Going `out of service` bumps every
 * reserved booking on the machine that has not ended and e-mails the people bumped.
 */
export async function changeStatus(
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
  const why = `${machine.name} is out of service`;
  const rows = await endFutureBookings(trx, ctx.actorId, { machine_id: machine.id }, { state: 'bumped', summary: `Bumped: ${why}`, reason: why }, ctx.now);
  const mailed = rows.filter((r) => r.kind !== 'hold');
  if (!mailed.length) return rows.map((r) => r.id);
  const site = await getSettings(trx);
  const people = new Map(((await trx('people').whereIn('id', mailed.map((r) => r.person_id)).select('id', 'email', 'name')) as { id: string; email: string; name: string }[]).map((p) => [p.id, p]));
  for (const r of mailed) {
    const p = people.get(r.person_id)!;
    await queueMail(trx, p.email, `Your booking on ${machine.name} is cancelled: the machine is out of service`, {
      greeting: `Hello ${p.name},`,
      paragraphs: [
        `${machine.name} was taken out of service after a fault was reported, so your booking on ${await formatRange(trx, { startsAt: r.starts_at, endsAt: r.ends_at }, site.timeZone)} cannot go ahead.`,
        'You are not charged for it: any hold on your card is released.',
        'Book another time or another machine when it suits you.',
        'The attached calendar file removes it from your calendar.',
      ],
      action: { label: 'Book another time', url: `${env().PUBLIC_BASE_URL}/book` },
    }, [cancellationAttachment(r, machine.name, site.name)]);
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
export function statusFor(severity: FaultSeverity, current: MachineStatus): MachineStatus {
  if (severity === 'stop') return 'out of service';
  if (severity === 'degraded' && current === 'in service') return 'degraded';
  return current;
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
  if (!found) throw new DomainError('not_found', 'not_found', 'No machine has that id or code.');
  const result = await transaction(async (trx) => {
    const machine = await lockMachineForChange(trx, found.id);
    if (machine.status === input.status) throw new DomainError('conflict', 'status_unchanged', `${machine.name} is already ${input.status}.`);
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
export async function returnToService(
  trx: Knex.Transaction,
  actor: Actor,
  machine: MachineRow,
  input: { reason: string; checklist: Partial<ReturnChecklist>; to?: MachineStatus },
  now: Date,
): Promise<{ bumped: string[] }> {
  const open = await openFaultCounts(trx, machine.id);
  if (open.stop.length) {
    const names = open.stop.map((f) => `“${f.summary}”`).join(', ');
    throw new DomainError('conflict', 'open_stop_fault',
      `${machine.name} has ${open.stop.length === 1 ? 'an open stop fault' : `${open.stop.length} open stop faults`}: ${names}. Resolve ${open.stop.length === 1 ? 'it' : 'them'} first, or use “Resolve and return to service” on the last one.`,
      { faults: open.stop.map((f) => f.id).join(',') });
  }
  const missing = (Object.keys(RETURN_CHECKLIST) as (keyof ReturnChecklist)[]).filter((k) => input.checklist[k] !== true);
  if (missing.length) {
    throw new DomainError('invalid', 'checklist_incomplete', 'Confirm every check before the machine goes back into service.',
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
      greeting: `Hello ${r.name},`,
      paragraphs: [`${machine.name}, which you reported out of service, is back ${to === 'degraded' ? 'in use, marked degraded' : 'in service'}. Steward’s note: ${note}`],
      action: { label: 'Book time', url: `${env().PUBLIC_BASE_URL}/book` },
    });
  }
}

