/** The device's heartbeat (measured beam seconds) and release (badge out or time up: the person is checked out). */
import { db } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { checkOut, getSession, type MachineSession } from '@lib/server/machine-sessions';
import { getCharge, type Charge } from '@lib/server/payments/charge-records';
import { billableMinutes } from '@lib/controller-rules';
import type { Controller } from './registry';
import { answerOf, snapshot, type StateAnswer } from './state';
import type { Conn } from '@lib/server/db';

// ---------------------------------------------------------------------------------------------
// Heartbeat and release

async function ownSession(ctrl: Controller, sessionId: string, trx: Conn = db()) {
  const s = await trx('machine_sessions').where({ id: sessionId }).first('id', 'machine_id', 'person_id', 'booking_id', 'checked_out_at', 'measured_beam_seconds');
  if (!s || s.machine_id !== ctrl.machineId) throw new DomainError('not_found', 'not_found', 'No such session on this controller\'s machine.');
  return s as { id: string; machine_id: string; person_id: string; booking_id: string | null; checked_out_at: Date | null; measured_beam_seconds: number | null };
}

async function recordBeamSeconds(sessionId: string, beamSeconds: number): Promise<void> {
  // cumulative: a late or repeated heartbeat never lowers what was measured
  await db()('machine_sessions').where({ id: sessionId }).whereNull('checked_out_at')
    .update({ measured_beam_seconds: db().raw('greatest(coalesce(measured_beam_seconds, 0), ?)', [beamSeconds]) });
}

export async function heartbeat(ctrl: Controller, input: { sessionId?: string; beamSeconds?: number; firmware?: string }): Promise<StateAnswer & { ok: true }> {
  if (input.firmware !== undefined && input.firmware !== ctrl.firmware) await db()('controllers').where({ id: ctrl.id }).update({ firmware: input.firmware });
  if (input.sessionId) {
    const s = await ownSession(ctrl, input.sessionId);
    if (input.beamSeconds !== undefined && !s.checked_out_at) await recordBeamSeconds(s.id, input.beamSeconds);
  }
  return { ok: true, ...answerOf(await snapshot(ctrl, new Date())) };
}

export interface ReleaseResult {
  session: { id: string; checkedInAt: string; checkedOutAt: string; beamMinutes: number; measuredBeamSeconds: number | null; beamSource: 'measured' | 'clock' };
  charge: Pick<Charge, 'id' | 'state' | 'currency' | 'amountMinor' | 'minutes'> | null;
  chargeProblem: string | null;
}

function releaseAnswer(s: MachineSession & { measuredBeamSeconds?: number | null }, measured: number | null, charge: Charge | null, chargeProblem: string | null): ReleaseResult {
  const out = s.checkedOutAt ?? new Date();
  return {
    session: {
      id: s.id, checkedInAt: s.checkedInAt.toISOString(), checkedOutAt: out.toISOString(), beamMinutes: s.beamMinutes ?? 0,
      measuredBeamSeconds: measured, beamSource: billableMinutes(s.checkedInAt, out, measured).source,
    },
    charge: charge ? { id: charge.id, state: charge.state, currency: charge.currency, amountMinor: charge.amountMinor, minutes: charge.minutes } : null,
    chargeProblem,
  };
}

/** Badge out or time up: records the final beam seconds and checks the person out (machine-sessions checkOut). Repeatable. */
export async function release(ctrl: Controller, input: { sessionId: string; beamSeconds: number }, now = new Date()): Promise<ReleaseResult> {
  const s = await ownSession(ctrl, input.sessionId);
  if (s.checked_out_at) {
    const closed = (await getSession(s.id))!;
    const c = await db()('charges').where({ session_id: s.id }).first('id');
    return releaseAnswer(closed, s.measured_beam_seconds, c ? await getCharge(c.id) : null, c ? null : 'Not charged yet.');
  }
  if (!s.booking_id) throw new DomainError('conflict', 'no_booking', 'This session has no booking; a steward closes it.');
  await recordBeamSeconds(s.id, input.beamSeconds);
  const result = await checkOut({ id: s.person_id, roles: [] }, s.booking_id, { jobTimerMinutes: null, materials: [], checkout: { leftCleanAndClear: true } }, now);
  const measured = (await db()('machine_sessions').where({ id: s.id }).first('measured_beam_seconds')).measured_beam_seconds as number | null;
  await recordAudit(db(), {
    actorId: s.person_id, kind: 'controller.released', subjectType: 'controller', subjectId: ctrl.id,
    summary: `Checked out by controller “${ctrl.name}”: ${result.session.beamMinutes} beam minute(s), ${measured === null ? 'wall clock' : `${measured} s measured`}`,
    after: { sessionId: s.id, measuredBeamSeconds: measured, beamMinutes: result.session.beamMinutes },
  });
  return releaseAnswer(result.session, measured, result.charge, result.chargeProblem);
}

/** How a session's beam time was counted, for its receipt: measured by a controller, or the wall clock. */
export async function beamSourceOf(sessionId: string | null): Promise<{ source: 'measured' | 'clock'; measuredSeconds: number | null } | null> {
  if (!sessionId) return null;
  const s = await db()('machine_sessions').where({ id: sessionId }).first('measured_beam_seconds');
  if (!s) return null;
  return s.measured_beam_seconds === null ? { source: 'clock', measuredSeconds: null } : { source: 'measured', measuredSeconds: s.measured_beam_seconds };
}
