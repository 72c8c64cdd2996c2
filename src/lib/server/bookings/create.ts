/** Creating a personal booking: the gate, the rules, the quota, the declared materials, the insert, the e-mail's job. */
import { retryOnConflict, transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { operateVerdict } from '@lib/server/clearances/state';
import { checkDeclaredMaterials } from '@lib/server/materials';
import { paymentIntentJob } from '@lib/server/payment-intents';
import { enqueueAll } from '@lib/server/jobs';
import { newBookingHoldFactsSql, type HoldFacts } from '@lib/server/payments/account';
import { checkQuota, checkRequest, minutesBetween, occupiedUntil } from '@lib/availability';
import type { Actor, Booking, BookingInput } from './records';
import { clashAndUse, insertBooking, lockForBooking, outOfService, ruleContext, slotTaken } from './gate';
import { confirmationJob } from './messages';

/**
 * Creates a booking for `actor` (the gate, the rules, the quota, the declared materials, the insert). The card
 * hold is an intent recorded in the same transaction (payment-intents.ts): the worker places it even if this
 * process dies right after the commit. A failed payment on the account refuses it (402), asked in the lock
 * statement. The caller (the API route) may try the hold once at once: with the booking come what its notice
 * depends on (payments/account.ts HoldFacts, null when the person is gone), read by a statement the booking runs
 * anyway, for holdAtBooking.
 */
export async function createBooking(actor: Actor, input: BookingInput, now = new Date()): Promise<{ booking: Booking; holdFacts: HoldFacts | null }> {
  // concurrent requests for one slot can deadlock inside the exclusion constraint: the transaction is run again
  return retryOnConflict(() => createBookingRow(actor, input, now));
}

async function createBookingRow(actor: Actor, input: BookingInput, now: Date): Promise<{ booking: Booking; holdFacts: HoldFacts | null }> {
  return transaction(async (trx) => {
    // the machine's row lock, the person's lock and the failed-payment check in one statement (the quota reads
    // below come after it)
    const machine = await lockForBooking(trx, input.machineId, actor.id, true);
    if (machine.status === 'out of service') throw outOfService(machine);
    // the clearance facts and the rules' stamp came with the lock statement
    const verdict = operateVerdict(machine.operate ?? null, input.startsAt);
    if (!verdict.ok) throw new DomainError('forbidden', 'clearance_required', verdict.message);

    const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx, machine.rulesStamp);
    const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'personal' }, { now, ...ctx });
    if (broken) throw new DomainError('invalid', broken.code, broken.message);

    const until = occupiedUntil(input.endsAt, ctx.rules.bufferMinutes);
    const facts = newBookingHoldFactsSql();
    const use = await clashAndUse(trx, actor.id, machine.id, input.startsAt, until, ctx.timeZone, { sql: facts.sql, bindings: facts.bindings(actor.id, machine.id, input.startsAt) });
    if (use.clash) throw slotTaken();
    const over = checkQuota(use.usedMinutes, minutesBetween(input.startsAt, input.endsAt), ctx.rules.quotas[use.tier]);
    if (over) throw new DomainError('invalid', over.code, over.message);

    // materials check: every declared material must be allowed on this machine, mode and thickness
    if (input.materials.length) await checkDeclaredMaterials(machine.id, input.materials, trx);

    // no savepoint: a refused insert ends this transaction anyway (409 slot_taken); the audit row goes in with it
    const booking = await insertBooking(trx, {
      machine_id: machine.id,
      person_id: actor.id,
      kind: 'personal',
      starts_at: input.startsAt,
      ends_at: input.endsAt,
      occupied_until: until,
      notes: input.notes,
    }, {
      savepoint: false,
      audit: {
        actorId: actor.id,
        kind: 'booking.created',
        subjectType: 'booking',
        summary: `Booked ${machine.name}`,
        after: { machineId: machine.id, startsAt: input.startsAt, endsAt: input.endsAt, materials: input.materials },
      },
    });
    if (input.materials.length) {
      await trx('booking_materials').insert(
        input.materials.map((m) => ({ booking_id: booking.id, material_id: m.materialId, mode: m.mode, thickness_mm: m.thicknessMm })),
      );
    }

    // the e-mail and its .ics are built by the worker, after the commit
    // (both jobs in one statement)
    await enqueueAll(trx, [confirmationJob(booking.id), paymentIntentJob({ kind: 'booking.hold', bookingId: booking.id })]);
    return { booking, holdFacts: (use.also ?? null) as HoldFacts | null };
  });
}
