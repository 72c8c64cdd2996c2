/**
 * Cascade: retiring a machine reaches into bookings (cancelled, holds released) and faults (closed) — so it lives
 * above the machines entity and those workflows, and none of them imports the other.
 */
import { transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { getMachine, lockMachine, type Machine } from '@lib/server/machines';
import { cancelFutureBookingsOnMachine } from '@lib/server/bookings/cancel';
import { closeFaultsOfRetiredMachine } from '@lib/server/faults/triage';

/**
 * Retires a machine (admin): it leaves every list, its label page and the booking calendar, and takes no more
 * bookings; its reserved bookings that have not ended are cancelled (the people are e-mailed, holds released after
 * the commit, by the worker) and its waitlist is withdrawn; its open faults are closed ("Machine retired: <reason>"), so
 * they leave the stewards' queue. Its history stays for the reports and the audit log. Refused (409)
 * while someone is checked in on it. Audited as `machine.retired`.
 */
export async function retireMachine(actorId: string, id: string, reason: string, now = new Date()): Promise<{ machine: Machine; cancelledBookings: number; closedFaults: number }> {
  const { machine, cancelled, closed } = await transaction(async (trx) => {
    // FOR UPDATE: a booking being made holds the machine row FOR SHARE, so it commits first (and is cancelled here) or sees the retirement
    const row = await lockMachine(trx, id, 'update');
    if (!row) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
    if (row.retiredAt) throw new DomainError('conflict', 'machine_retired', `${row.name} is already retired.`);
    const open = await trx('machine_sessions').where({ machine_id: id }).whereNull('checked_out_at').first('id');
    if (open) throw new DomainError('conflict', 'machine_in_use', `Someone is checked in on ${row.name}; retire it after they check out (or a steward closes the session).`);
    await trx('machines').where({ id }).update({ retired_at: now, updated_at: trx.fn.now() });
    const cancelled = await cancelFutureBookingsOnMachine(trx, actorId, { id, name: row.name }, reason, now);
    const closed = await closeFaultsOfRetiredMachine(trx, actorId, { id, name: row.name }, reason, now);
    await recordAudit(trx, {
      actorId,
      kind: 'machine.retired',
      subjectType: 'machine',
      subjectId: id,
      summary: `${row.name} (${row.code}) retired: ${reason}`.slice(0, 500),
      before: { retiredAt: null },
      after: { retiredAt: now, reason, cancelledBookings: cancelled.length, closedFaults: closed.length },
    });
    return { machine: (await getMachine(id, trx))!, cancelled, closed };
  });
  // their card holds are released by the worker (intents recorded with the cancellations)
  return { machine, cancelledBookings: cancelled.length, closedFaults: closed.length };
}
