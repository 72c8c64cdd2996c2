/**
 * Sessions at the machine: check-in (window, gate, pre-use checklist), check-out (beam time, materials used,
 * then the charge through payments.ts) and the sweep that closes sessions left open. All SQL of this area.
 *
 * One open session per machine and one session per booking are enforced by unique indexes
 * (machine_sessions_one_open_per_machine, machine_sessions_one_per_booking).
 */
import { db, pgCode, PG, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { canOperate } from './clearances/state';
import { chargeBeamTime } from './payments/billing';
import { type Charge } from './payments/charge-records';
import { recordPaymentIntent } from './payment-intents';
import { versionAt } from './prices';
import { hasAnyRole, type Actor } from '@lib/roles';
import {
  AUTO_CLOSE_GRACE_MINUTES,
  checkCheckOut,
  checkInWindow,
  checkPreUse,
  coolantPolicy,
  type CoolantPolicy,
} from '@lib/checklist';
import { billableMinutes } from '@lib/controller-rules';
import { log } from './log';
import { lockMachine } from './machines';

export interface MachineSession {
  id: string;
  bookingId: string | null;
  machineId: string;
  personId: string;
  checkedInAt: Date;
  checkedOutAt: Date | null;
  beamMinutes: number | null;
  jobTimerMinutes: number | null;
  checklist: Record<string, unknown>;
  coolantC: number | null;
  checkout: Record<string, unknown>;
  closedBySystem: boolean;
  needsSteward: boolean;
}

type Row = {
  id: string; booking_id: string | null; machine_id: string; person_id: string; checked_in_at: Date; checked_out_at: Date | null;
  beam_minutes: number | null; job_timer_minutes: number | null; checklist: Record<string, unknown>; coolant_temp_c: string | null;
  checkout: Record<string, unknown>; closed_by_system: boolean; needs_steward: boolean; measured_beam_seconds?: number | null;
};

function toSession(r: Row): MachineSession {
  return {
    id: r.id,
    bookingId: r.booking_id,
    machineId: r.machine_id,
    personId: r.person_id,
    checkedInAt: r.checked_in_at,
    checkedOutAt: r.checked_out_at,
    beamMinutes: r.beam_minutes,
    jobTimerMinutes: r.job_timer_minutes,
    checklist: r.checklist,
    coolantC: r.coolant_temp_c === null ? null : Number(r.coolant_temp_c),
    checkout: r.checkout,
    closedBySystem: r.closed_by_system,
    needsSteward: r.needs_steward,
  };
}

/** The chiller rule of a machine (air-cooled: no reading). */
export async function machineCoolant(machineId: string, trx: Conn = db()): Promise<CoolantPolicy> {
  const m = await trx('machines').where({ id: machineId }).first('coolant_type', 'coolant_min_c', 'coolant_max_c');
  if (!m) throw new DomainError('not_found', 'not_found', 'No such machine.');
  return coolantPolicy({
    coolantType: m.coolant_type,
    coolantMinC: m.coolant_min_c === null ? null : Number(m.coolant_min_c),
    coolantMaxC: m.coolant_max_c === null ? null : Number(m.coolant_max_c),
  });
}

export interface CheckInInput {
  checklist: Record<string, unknown>;
  coolantC?: number | null;
}

type BookingRow = { id: string; machine_id: string; person_id: string; state: string; starts_at: Date; ends_at: Date; kind: string };

/**
 * Checks in the owner of booking `bookingId` at `now`: 403 not_your_booking, 409 too_early / booking_ended /
 * already_checked_in / booking_not_active / machine_out_of_service / machine_in_use, 403 clearance_required,
 * 422 checklist_incomplete / coolant_out_of_range. Creates the session and marks the booking `checked in`.
 */
export async function checkIn(actor: Actor, bookingId: string, input: CheckInInput, now = new Date()): Promise<MachineSession> {
  return transaction(async (trx) => {
    const b = (await trx('bookings').where({ id: bookingId }).forUpdate().first()) as BookingRow | undefined;
    if (!b) throw new DomainError('not_found', 'not_found', 'No such booking.');
    if (b.person_id !== actor.id) throw new DomainError('forbidden', 'not_your_booking', 'This booking is someone else\'s. Only the person who booked can check in.');
    if (b.state === 'checked in') throw new DomainError('conflict', 'already_checked_in', 'You are already checked in on this booking.');
    if (b.state !== 'reserved') throw new DomainError('conflict', 'booking_not_active', `This booking is ${b.state}; it cannot be checked in.`);
    const window = checkInWindow(b.starts_at, b.ends_at, now);
    if (!window.ok) throw new DomainError('conflict', window.code, window.message);
    // FOR UPDATE: a stop fault taking the machine out of service waits for this check-in, or this check-in sees it
    const m = await lockMachine(trx, b.machine_id, 'update');
    if (!m) throw new DomainError('not_found', 'not_found', 'No such machine.');
    if (m.status === 'out of service') throw new DomainError('conflict', 'machine_out_of_service', `${m.name} is out of service. Do not use it; a steward will put it back in service.`);
    const verdict = await canOperate(actor.id, b.machine_id, now, trx);
    if (!verdict.ok) throw new DomainError('forbidden', 'clearance_required', verdict.message);
    const pre = checkPreUse(input, await machineCoolant(b.machine_id, trx));
    if (!pre.ok) throw new DomainError('invalid', pre.code, pre.message, pre.fields);
    let row: Row;
    try {
      [row] = (await trx.transaction(async (sp) =>
        sp('machine_sessions')
          .insert({
            booking_id: b.id, machine_id: b.machine_id, person_id: actor.id, checked_in_at: now,
            checklist: JSON.stringify(pre.checklist), coolant_temp_c: pre.coolantC,
          })
          .returning('*'),
      )) as Row[] as [Row];
    } catch (err) {
      if (pgCode(err) === PG.uniqueViolation) throw new DomainError('conflict', 'machine_in_use', `Another session is still open on ${m.name}. A steward can close it.`);
      throw err;
    }
    await trx('bookings').where({ id: b.id }).update({ state: 'checked in', checked_in_at: now, updated_at: trx.fn.now() });
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'session.checked_in',
      subjectType: 'machine_session',
      subjectId: row.id,
      summary: `Checked in on ${m.name}`,
      before: { bookingState: 'reserved' },
      after: { bookingState: 'checked in', coolantC: pre.coolantC, checklist: pre.checklist },
    });
    return toSession(row);
  });
}

export interface MaterialUsed {
  sku: string;
  quantity: number;
}

export interface CheckOutInput {
  jobTimerMinutes?: number | null;
  materials: MaterialUsed[];
  checkout: Record<string, unknown>;
}

export interface CheckOutResult {
  session: MachineSession;
  charge: Charge | null;
  /** Why no charge was made, when none was (e.g. no price version in force); a steward settles it. */
  chargeProblem: string | null;
}

/** The sheets the space sells (from the price version in force), for the check-out form. */
export async function soldMaterials(at = new Date()): Promise<{ sku: string; name: string; priceMinor: number; currency: string }[]> {
  const v = await versionAt(at);
  if (!v) return [];
  return v.materials.map((m) => ({ sku: m.sku, name: m.name, priceMinor: m.priceMinor, currency: v.currency }));
}

/**
 * Checks out the open session of booking `bookingId` (its owner, or a steward or admin on their behalf):
 * records beam time, the job timer, the sheets used and the check-out answer; the booking becomes `completed`.
 * After the transaction commits, the session is charged through chargeBeamTime (idempotent per session).
 */
export async function checkOut(actor: Actor, bookingId: string, input: CheckOutInput, now = new Date()): Promise<CheckOutResult> {
  const answers = checkCheckOut(input.checkout);
  if (!answers.ok) throw new DomainError('invalid', answers.code, answers.message, answers.fields);
  const skus = new Set<string>();
  for (const m of input.materials) {
    if (skus.has(m.sku)) throw new DomainError('invalid', 'invalid', 'List each sheet once.', { materials: `${m.sku} appears twice.` });
    skus.add(m.sku);
  }
  const materials = input.materials.filter((m) => m.quantity > 0);
  const session = await transaction(async (trx) => {
    const b = (await trx('bookings').where({ id: bookingId }).forUpdate().first()) as BookingRow | undefined;
    if (!b) throw new DomainError('not_found', 'not_found', 'No such booking.');
    const mine = b.person_id === actor.id;
    if (!mine && !hasAnyRole(actor.roles, ['steward', 'admin'])) throw new DomainError('forbidden', 'not_your_booking', 'This booking is someone else\'s.');
    const open = (await trx('machine_sessions').where({ booking_id: b.id }).whereNull('checked_out_at').forUpdate().first()) as Row | undefined;
    if (!open) throw new DomainError('conflict', 'not_checked_in', 'There is no open session on this booking: check in first.');
    if (materials.length) {
      const v = await versionAt(open.checked_in_at, trx);
      const sold = new Set((v?.materials ?? []).map((m) => m.sku));
      const unknown = materials.filter((m) => !sold.has(m.sku));
      if (unknown.length) throw new DomainError('invalid', 'unknown_material', `The space does not sell ${unknown.map((m) => m.sku).join(', ')}.`, { materials: 'Choose sheets from the list.' });
    }
    // beam seconds measured by the machine's controller, when it reported any, else the wall clock
    const { minutes, source } = billableMinutes(open.checked_in_at, now, open.measured_beam_seconds);
    const [row] = (await trx('machine_sessions')
      .where({ id: open.id })
      .update({
        checked_out_at: now,
        beam_minutes: minutes,
        job_timer_minutes: input.jobTimerMinutes ?? null,
        checkout: JSON.stringify({ ...answers.checkout, materials, by: mine ? 'self' : 'staff', beamSource: source }),
      })
      .returning('*')) as Row[];
    await trx('bookings').where({ id: b.id }).update({ state: 'completed', updated_at: trx.fn.now() });
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'session.checked_out',
      subjectType: 'machine_session',
      subjectId: open.id,
      summary: `Checked out after ${minutes} beam minute${minutes === 1 ? '' : 's'}${mine ? '' : ' (by staff)'}`,
      before: { bookingState: b.state },
      after: { bookingState: 'completed', beamMinutes: minutes, jobTimerMinutes: input.jobTimerMinutes ?? null, materials },
    });
    // the charge is an intent recorded with the check-out: made by the worker if this process dies after the commit
    await recordPaymentIntent(trx, { kind: 'session.charge', sessionId: open.id, materials });
    return toSession(row!);
  });
  return { session, ...(await charge(session, materials)) };
}

async function charge(s: MachineSession, materials: MaterialUsed[]): Promise<{ charge: Charge | null; chargeProblem: string | null }> {
  try {
    const c = await chargeBeamTime({
      personId: s.personId, machineId: s.machineId, bookingId: s.bookingId ?? undefined, sessionId: s.id,
      startedAt: s.checkedInAt, minutes: s.beamMinutes ?? 0, materials,
    });
    return { charge: c, chargeProblem: null };
  } catch (err) {
    // the session is closed and recorded either way; a charge that could not be priced is left for a steward
    log.error({ event: 'error', sessionId: s.id, err }, 'charging a session failed');
    return { charge: null, chargeProblem: err instanceof DomainError ? err.message : 'The charge could not be made; a steward will settle it.' };
  }
}

export async function getSession(id: string, trx: Conn = db()): Promise<MachineSession | null> {
  const r = (await trx('machine_sessions').where({ id }).first()) as Row | undefined;
  return r ? toSession(r) : null;
}

/** The open session on a machine, with the person's name, or null. */
export async function openSessionOn(machineId: string): Promise<(MachineSession & { personName: string; bookingEndsAt: Date | null }) | null> {
  const r = await db()('machine_sessions as s')
    .join('people as p', 'p.id', 's.person_id')
    .leftJoin('bookings as b', 'b.id', 's.booking_id')
    .where('s.machine_id', machineId)
    .whereNull('s.checked_out_at')
    .first('s.*', 'p.name as person_name', 'b.ends_at as booking_ends_at');
  return r ? { ...toSession(r as Row), personName: r.person_name, bookingEndsAt: r.booking_ends_at } : null;
}

/** The person's booking on the machine that is now or starts within the hour (reserved or checked in). */
export async function myCurrentBooking(personId: string, machineId: string, now = new Date()): Promise<{ id: string; state: string; startsAt: Date; endsAt: Date } | null> {
  const r = (await db()('bookings')
    .where({ person_id: personId, machine_id: machineId })
    .whereIn('state', ['reserved', 'checked in'])
    .where('ends_at', '>', now)
    .where('starts_at', '<=', new Date(now.getTime() + 60 * 60_000))
    .orderBy('starts_at')
    .first()) as BookingRow | undefined;
  return r ? { id: r.id, state: r.state, startsAt: r.starts_at, endsAt: r.ends_at } : null;
}

/** Sessions that closed themselves (auto check-out) still waiting for a steward, newest first. */
export async function sessionsNeedingSteward(limit = 50): Promise<(MachineSession & { personName: string; machineName: string })[]> {
  const rows = await db()('machine_sessions as s')
    .join('people as p', 'p.id', 's.person_id')
    .join('machines as m', 'm.id', 's.machine_id')
    .where('s.needs_steward', true)
    .orderBy('s.checked_in_at', 'desc')
    .limit(limit)
    .select('s.*', 'p.name as person_name', 'm.name as machine_name');
  return (rows as (Row & { person_name: string; machine_name: string })[]).map((r) => ({ ...toSession(r), personName: r.person_name, machineName: r.machine_name }));
}

/** A steward marks an auto-closed session as seen (audited). */
export async function clearStewardFlag(actor: Actor, sessionId: string, note: string): Promise<MachineSession> {
  return transaction(async (trx) => {
    const r = (await trx('machine_sessions').where({ id: sessionId }).forUpdate().first()) as Row | undefined;
    if (!r) throw new DomainError('not_found', 'not_found', 'No such session.');
    if (!r.needs_steward) throw new DomainError('conflict', 'not_flagged', 'This session is not waiting for a steward.');
    const [u] = (await trx('machine_sessions').where({ id: sessionId }).update({ needs_steward: false }).returning('*')) as Row[];
    await recordAudit(trx, { actorId: actor.id, kind: 'session.reviewed', subjectType: 'machine_session', subjectId: sessionId, summary: note || 'Auto-closed session reviewed', before: { needsSteward: true }, after: { needsSteward: false } });
    return toSession(u!);
  });
}

/**
 * Closes sessions still open `graceMinutes` after their booking's end (sessions without a booking: 4 hours
 * after check-in). Beam time is counted to the booking's end (the time the machine was held), the booking
 * becomes `completed`, the session is flagged `needs_steward`, and it is charged like a check-out.
 */
export async function sweepOpenSessions(now = new Date(), graceMinutes = AUTO_CLOSE_GRACE_MINUTES): Promise<{ closed: number }> {
  const cutoff = new Date(now.getTime() - graceMinutes * 60_000);
  const closed = await transaction(async (trx) => {
    const rows = (await trx('machine_sessions as s')
      .leftJoin('bookings as b', 'b.id', 's.booking_id')
      .whereNull('s.checked_out_at')
      .where((q) => q.where('b.ends_at', '<=', cutoff).orWhere((q2) => q2.whereNull('s.booking_id').where('s.checked_in_at', '<=', new Date(now.getTime() - 4 * 3600_000))))
      .forUpdate('s')
      .skipLocked()
      .select('s.*', 'b.ends_at as booking_ends_at')) as (Row & { booking_ends_at: Date | null })[];
    const out: MachineSession[] = [];
    for (const r of rows) {
      const end = r.booking_ends_at && r.booking_ends_at > r.checked_in_at ? r.booking_ends_at : new Date(r.checked_in_at.getTime() + 4 * 3600_000);
      const { minutes, source } = billableMinutes(r.checked_in_at, end, r.measured_beam_seconds);
      const [u] = (await trx('machine_sessions')
        .where({ id: r.id })
        .update({ checked_out_at: end, beam_minutes: minutes, closed_by_system: true, needs_steward: true, checkout: JSON.stringify({ autoClosedAt: now.toISOString(), materials: [], beamSource: source }) })
        .returning('*')) as Row[];
      if (r.booking_id) await trx('bookings').where({ id: r.booking_id }).update({ state: 'completed', updated_at: trx.fn.now() });
      await recordAudit(trx, {
        actorId: null,
        kind: 'session.auto_closed',
        subjectType: 'machine_session',
        subjectId: r.id,
        summary: `Session left open ${graceMinutes} minutes past its booking: closed at the booking's end (${minutes} beam minutes) and flagged for a steward`,
        before: { open: true },
        after: { checkedOutAt: end.toISOString(), beamMinutes: minutes, needsSteward: true },
      });
      await recordPaymentIntent(trx, { kind: 'session.charge', sessionId: r.id, materials: [] });
      out.push(toSession(u!));
    }
    return out;
  });
  for (const s of closed) await charge(s, []);
  return { closed: closed.length };
}

export interface SlotOnMachine {
  bookingId: string;
  personId: string;
  personName: string;
  kind: string;
  state: string;
  startsAt: Date;
  endsAt: Date;
  courseName: string | null;
}

/** What is booked on one machine now and next (active bookings, holds left out), with who booked. */
export async function machineNowAndNext(machineId: string, now = new Date()): Promise<{ current: SlotOnMachine | null; next: SlotOnMachine | null }> {
  const rows = (await db()('bookings as b')
    .join('people as p', 'p.id', 'b.person_id')
    .where('b.machine_id', machineId)
    .whereIn('b.state', ['reserved', 'checked in'])
    .whereNot('b.kind', 'hold')
    .where('b.ends_at', '>', now)
    .where('b.starts_at', '<', new Date(now.getTime() + 7 * 86_400_000))
    .orderBy('b.starts_at')
    .limit(2)
    .select('b.id', 'b.person_id', 'p.name', 'b.kind', 'b.state', 'b.starts_at', 'b.ends_at', 'b.course_name')) as {
    id: string; person_id: string; name: string; kind: string; state: string; starts_at: Date; ends_at: Date; course_name: string | null;
  }[];
  const slots = rows.map((r) => ({ bookingId: r.id, personId: r.person_id, personName: r.name, kind: r.kind, state: r.state, startsAt: r.starts_at, endsAt: r.ends_at, courseName: r.course_name }));
  // a booking checked in a few minutes early is already the current one
  const current = slots[0] && (slots[0].startsAt <= now || slots[0].state === 'checked in') ? slots[0] : null;
  const next = current ? (slots[1] ?? null) : (slots[0] ?? null);
  return { current, next };
}

/**
 * The day's bookings on one machine for the public QR page: times, kind and state only — never who booked
 * (holds and cancelled or bumped bookings left out).
 */
export async function machineDayPublic(machineId: string, from: Date, to: Date): Promise<{ startsAt: Date; endsAt: Date; kind: string; state: string }[]> {
  const rows = (await db()('bookings')
    .where({ machine_id: machineId })
    .whereIn('state', ['reserved', 'checked in', 'completed', 'no-show'])
    .whereNot('kind', 'hold')
    .where('starts_at', '<', to)
    .where('ends_at', '>', from)
    .orderBy('starts_at')
    .select('starts_at', 'ends_at', 'kind', 'state')) as { starts_at: Date; ends_at: Date; kind: string; state: string }[];
  return rows.map((r) => ({ startsAt: r.starts_at, endsAt: r.ends_at, kind: r.kind, state: r.state }));
}
