/** Class blocks: an instructor's teaching time, and the machine time of an induction session. */
import type { Knex } from 'knex';
import { transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { canOperate } from '@lib/server/clearances/state';
import { checkRequest, occupiedUntil } from '@lib/availability';
import type { Actor, Booking, MachineRow, Row } from './records';
import { assertFree, insertBooking, lockForBooking, outOfService, ruleContext } from './gate';
import { raiseSequence, sendConfirmation } from './messages';
import { offerFreedTime } from './waitlist';

export interface ClassBlockInput {
  machineId: string;
  startsAt: Date;
  endsAt: Date;
  courseName: string;
  studentEmails: string[];
  notes: string;
}

type Student = { id: string; name: string; email: string };
type ClassTime = { machineId: string; startsAt: Date; endsAt: Date; courseName: string; notes: string };

/**
 * The part every class block shares, in the caller's transaction: the machine lock, out of service, `beforeRules`
 * (the caller's own checks, in this order), the rules (opening hours, the grid, closures), free time and the insert.
 */
async function placeClassTime(trx: Knex.Transaction, actorId: string, input: ClassTime, now: Date, beforeRules?: (machine: MachineRow) => Promise<void>) {
  const machine = await lockForBooking(trx, input.machineId);
  if (machine.status === 'out of service') throw outOfService(machine);
  if (beforeRules) await beforeRules(machine);
  const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx);
  const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'class' }, { now, ...ctx });
  if (broken) throw new DomainError('invalid', broken.code, broken.message);
  const until = occupiedUntil(input.endsAt, ctx.rules.bufferMinutes);
  await assertFree(trx, machine.id, input.startsAt, until);
  const booking = await insertBooking(trx, {
    machine_id: machine.id,
    person_id: actorId,
    kind: 'class',
    course_name: input.courseName,
    starts_at: input.startsAt,
    ends_at: input.endsAt,
    occupied_until: until,
    notes: input.notes,
  });
  return { booking, machine, ctx };
}

/** An instructor books a teaching block; the instructor must be cleared, the students are supervised. */
export async function createClassBlock(actor: Actor, input: ClassBlockInput, now = new Date()): Promise<Booking & { students: Student[] }> {
  return transaction(async (trx) => {
    let students: Student[] = [];
    const { booking, machine, ctx } = await placeClassTime(trx, actor.id, input, now, async (machine) => {
      const verdict = await canOperate(actor.id, machine.id, input.startsAt, trx);
      if (!verdict.ok) throw new DomainError('forbidden', 'clearance_required', verdict.message);
      const emails = [...new Set(input.studentEmails.map((e) => e.toLowerCase()))];
      students = emails.length
        ? ((await trx('people').whereRaw('lower(email) = ANY(?)', [emails]).where({ active: true }).select('id', 'name', 'email')) as Student[])
        : [];
      const missing = emails.filter((e) => !students.some((s) => s.email.toLowerCase() === e));
      if (missing.length) {
        throw new DomainError('invalid', 'invalid', 'Some students have no account.', { studentEmails: `No active account for: ${missing.join(', ')}` });
      }
    });
    if (students.length) await trx('class_block_students').insert(students.map((s) => ({ booking_id: booking.id, person_id: s.id })));
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'booking.class_block_created',
      subjectType: 'booking',
      subjectId: booking.id,
      summary: `Class block on ${machine.name}: ${input.courseName} (${students.length} students, supervised)`,
      after: { machineId: machine.id, startsAt: booking.startsAt, endsAt: booking.endsAt, students: students.map((s) => s.id) },
    });
    await sendConfirmation(trx, actor.id, booking, machine, ctx.timeZone, ctx.siteName);
    return { ...booking, students };
  });
}

/**
 * Machine time for an induction session, in the caller's transaction: a class block (opening hours, the grid,
 * closures and free time checked like any class block). The one who publishes it need not be cleared: the
 * session is supervised by its instructor. 409 slot_taken when the time is booked.
 */
export async function reserveClassTime(trx: Knex.Transaction, actorId: string, input: ClassTime, now = new Date()): Promise<Booking> {
  const { booking, machine } = await placeClassTime(trx, actorId, input, now);
  await recordAudit(trx, {
    actorId, kind: 'booking.class_block_created', subjectType: 'booking', subjectId: booking.id,
    summary: `Class block on ${machine.name}: ${input.courseName}`,
    after: { machineId: machine.id, startsAt: booking.startsAt, endsAt: booking.endsAt },
  });
  return booking;
}

/** Gives back the machine time of a cancelled induction session (in the caller's transaction); freed time goes to the waitlist. */
export async function releaseClassTime(trx: Knex.Transaction, actorId: string, bookingId: string, now = new Date()): Promise<void> {
  const r = (await trx('bookings').where({ id: bookingId }).forUpdate().first()) as Row | undefined;
  if (!r || r.state !== 'reserved' || r.ends_at <= now) return;
  await trx('bookings').where({ id: bookingId }).update({ state: 'cancelled', cancelled_at: now, cancelled_by: actorId, calendar_sequence: raiseSequence(trx), updated_at: trx.fn.now() });
  await recordAudit(trx, { actorId, kind: 'booking.cancelled', subjectType: 'booking', subjectId: bookingId, summary: 'Class block released (its induction session was cancelled)', before: { state: 'reserved' }, after: { state: 'cancelled' } });
  await offerFreedTime(trx, r.machine_id, { start: r.starts_at > now ? r.starts_at : now, end: r.ends_at }, now);
}
