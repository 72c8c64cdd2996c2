/** The waitlist: joining it, offering freed time as a 15-minute hold, and claiming the hold. */
import crypto from 'node:crypto';
import type { Knex } from 'knex';
import { transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { canOperate } from '@lib/server/clearances/state';
import { getRules, getTier } from '@lib/server/booking-rules';
import { queueMail } from '@lib/server/mail';
import { env } from '@lib/server/env';
import { checkQuota, checkRequest, minutesBetween, occupiedUntil, type Interval } from '@lib/availability';
import { hashToken, HOLD_MINUTES, toBooking, type Actor, type Booking, type Row } from './records';
import { assertFree, insertBooking, lockForBooking, lockPerson, outOfService, ruleContext, siteSettings, weeklyMinutes } from './gate';
import { formatRange, sendConfirmation } from './messages';

export async function joinWaitlist(actor: Actor, input: { machineId: string; startsAt: Date; endsAt: Date }, now = new Date()) {
  return transaction(async (trx) => {
    const machine = await lockForBooking(trx, input.machineId);
    const verdict = await canOperate(actor.id, machine.id, input.startsAt, trx);
    if (!verdict.ok) throw new DomainError('forbidden', 'clearance_required', verdict.message);
    const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx);
    const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'personal' }, { now, ...ctx });
    if (broken) throw new DomainError('invalid', broken.code, broken.message);
    const dup = await trx('waitlist_entries')
      .where({ machine_id: machine.id, person_id: actor.id, starts_at: input.startsAt, ends_at: input.endsAt })
      .whereIn('state', ['waiting', 'offered'])
      .first('id');
    if (dup) throw new DomainError('conflict', 'already_waiting', 'You are already on the waitlist for that time.');
    const [r] = await trx('waitlist_entries')
      .insert({ machine_id: machine.id, person_id: actor.id, starts_at: input.startsAt, ends_at: input.endsAt })
      .returning('*');
    await recordAudit(trx, { actorId: actor.id, kind: 'waitlist.joined', subjectType: 'waitlist_entry', subjectId: r.id, summary: `Waitlist for ${machine.name}` });
    return { id: r.id as string, machineId: machine.id, startsAt: r.starts_at as Date, endsAt: r.ends_at as Date, state: r.state as string };
  });
}

/**
 * Time on a machine has been freed: the first waiting person whose range fits inside it (and is still
 * free) gets a 15-minute hold and an e-mail with a claim link. Runs in the caller's transaction.
 */
export async function offerFreedTime(trx: Knex.Transaction, machineId: string, freed: Interval, now: Date): Promise<string | null> {
  if (freed.end <= freed.start) return null;
  const candidates = await trx('waitlist_entries as w')
    .join('people as p', 'p.id', 'w.person_id')
    .where({ 'w.machine_id': machineId, 'w.state': 'waiting' })
    .where('w.starts_at', '>=', freed.start)
    .where('w.ends_at', '<=', freed.end)
    .where('w.starts_at', '>', now)
    .orderBy('w.created_at')
    .forUpdate()
    .select('w.*', 'p.email', 'p.name');
  const machine = await trx('machines').where({ id: machineId }).first('name', 'status');
  if (!machine || machine.status === 'out of service') return null;
  const rules = await getRules(machineId, trx);
  for (const c of candidates) {
    const until = occupiedUntil(c.ends_at, rules.bufferMinutes);
    let hold: Booking;
    try {
      await assertFree(trx, machineId, c.starts_at, until);
      hold = await insertBooking(trx, {
        machine_id: machineId,
        person_id: c.person_id,
        kind: 'hold',
        starts_at: c.starts_at,
        ends_at: c.ends_at,
        occupied_until: until,
        hold_expires_at: new Date(now.getTime() + HOLD_MINUTES * 60_000),
      });
    } catch (err) {
      if (err instanceof DomainError && err.code === 'slot_taken') continue;
      throw err;
    }
    const token = crypto.randomBytes(24).toString('base64url');
    await trx('waitlist_entries').where({ id: c.id }).update({ state: 'offered', hold_booking_id: hold.id, claim_token_hash: hashToken(token), offered_at: now });
    const settings = await siteSettings(trx);
    await queueMail(trx, c.email, `A time on ${machine.name} is free: claim it within ${HOLD_MINUTES} minutes`, {
      greeting: `Hello ${c.name},`,
      paragraphs: [
        `The time you were waiting for on ${machine.name} is free: ${await formatRange(trx, { startsAt: c.starts_at, endsAt: c.ends_at }, settings.timeZone)}.`,
        `It is held for you for ${HOLD_MINUTES} minutes. After that it goes to the next person waiting.`,
      ],
      action: { label: 'Claim this time', url: `${env().PUBLIC_BASE_URL}/book/claim?token=${token}` },
    });
    return c.id as string;
  }
  return null;
}

/** Turns a held waitlist offer into a booking for the person it was offered to. */
export async function claimWaitlist(actor: Actor, token: string, now = new Date()): Promise<Booking> {
  return transaction(async (trx) => {
    const e = await trx('waitlist_entries').where({ claim_token_hash: hashToken(token) }).forUpdate().first();
    if (!e || e.person_id !== actor.id) throw new DomainError('not_found', 'not_found', 'This claim link is not valid for you.');
    if (e.state !== 'offered') throw new DomainError('conflict', 'claim_expired', 'This offer has expired or was already used.');
    const hold = (await trx('bookings').where({ id: e.hold_booking_id }).forUpdate().first()) as Row | undefined;
    if (!hold || hold.state !== 'reserved' || hold.kind !== 'hold' || (hold.hold_expires_at && hold.hold_expires_at < now)) {
      throw new DomainError('conflict', 'claim_expired', 'The 15 minutes to claim this time have passed.');
    }
    const machine = await lockForBooking(trx, e.machine_id);
    if (machine.status === 'out of service') throw outOfService(machine);
    const verdict = await canOperate(actor.id, machine.id, hold.starts_at, trx);
    if (!verdict.ok) throw new DomainError('forbidden', 'clearance_required', verdict.message);
    const settings = await siteSettings(trx);
    await lockPerson(trx, actor.id);
    const rules = await getRules(machine.id, trx);
    const used = await weeklyMinutes(trx, actor.id, machine.id, hold.starts_at, settings.timeZone, hold.id);
    const over = checkQuota(used, minutesBetween(hold.starts_at, hold.ends_at), rules.quotas[await getTier(actor.id, trx)]);
    if (over) throw new DomainError('invalid', over.code, over.message);
    const [u] = await trx('bookings').where({ id: hold.id }).update({ kind: 'personal', hold_expires_at: null, updated_at: trx.fn.now() }).returning('*');
    await trx('waitlist_entries').where({ id: e.id }).update({ state: 'claimed' });
    const booking = toBooking(u as Row);
    await recordAudit(trx, { actorId: actor.id, kind: 'booking.claimed', subjectType: 'booking', subjectId: booking.id, summary: `Claimed a waitlist offer on ${machine.name}` });
    await sendConfirmation(trx, actor.id, booking, machine, settings.timeZone, settings.name);
    return booking;
  });
}
