/**
 * Bookings: creating (the gate and the rules), cancelling, the calendar feed, class blocks, the
 * waitlist and its 15-minute holds, and the no-show sweep. All SQL of this area.
 *
 * No double booking is enforced by PostgreSQL (bookings_no_overlap, an exclusion constraint over the
 * machine and [starts_at, occupied_until) of active bookings): SQLSTATE 23P01 becomes 409 slot_taken.
 * The weekly quota is checked under a per-person advisory lock held to the end of the transaction.
 */
import crypto from 'node:crypto';
import type { Knex } from 'knex';
import { db, pgCode, PG, retryOnConflict, transaction } from './db';
import { recordAudit } from './audit';
import { HttpError } from './errors';
import { canOperate } from './clearances';
import { getRules, getTier, listClosures, type MachineRules } from './booking-rules';
import { getSettings, siteLocale } from './settings';
import { siteFormat } from '../format';
import { queueMail, type MailAttachment } from './mail';
import { env } from './env';
import { hasAnyRole, type Role } from '../roles';
import {
  checkQuota,
  checkRequest,
  freeRanges,
  isLateCancel,
  localWeek,
  minutesBetween,
  NO_SHOW_AFTER_MINUTES,
  occupiedUntil,
  openIntervals,
  type Interval,
} from '../availability';
import { buildIcs } from '../ics';
import { checkDeclaredMaterials } from './materials';
import { cancellationIntent, heldOnBookings, recordPaymentIntent } from './payment-intents';
import { quoteFor } from './prices';
import { log } from './log';

type Conn = Knex | Knex.Transaction;

export const ACTIVE_STATES = ['reserved', 'checked in'] as const;
/** States that count against the weekly quota. */
const QUOTA_STATES = ['reserved', 'checked in', 'completed', 'no-show'];
export const HOLD_MINUTES = 15;

export type BookingState = 'reserved' | 'checked in' | 'completed' | 'cancelled' | 'no-show' | 'bumped';
export type BookingKind = 'personal' | 'class' | 'hold';

export interface Booking {
  id: string;
  machineId: string;
  personId: string;
  kind: BookingKind;
  state: BookingState;
  startsAt: Date;
  endsAt: Date;
  occupiedUntil: Date;
  courseName: string | null;
  notes: string;
  lateCancel: boolean;
  holdExpiresAt: Date | null;
  createdAt: Date;
}

type Row = {
  id: string; machine_id: string; person_id: string; kind: BookingKind; state: BookingState; starts_at: Date; ends_at: Date;
  occupied_until: Date; course_name: string | null; notes: string; late_cancel: boolean; hold_expires_at: Date | null; created_at: Date;
  calendar_sequence: number;
};

function toBooking(r: Row): Booking {
  return {
    id: r.id,
    machineId: r.machine_id,
    personId: r.person_id,
    kind: r.kind,
    state: r.state,
    startsAt: r.starts_at,
    endsAt: r.ends_at,
    occupiedUntil: r.occupied_until,
    courseName: r.course_name,
    notes: r.notes,
    lateCancel: r.late_cancel,
    holdExpiresAt: r.hold_expires_at,
    createdAt: r.created_at,
  };
}

export interface Actor {
  id: string;
  roles: readonly Role[];
}

export interface MaterialDeclaration {
  materialId: string;
  thicknessMm: number;
  mode: 'cut' | 'engrave' | 'score';
}

export interface BookingInput {
  machineId: string;
  startsAt: Date;
  endsAt: Date;
  materials: MaterialDeclaration[];
  notes: string;
}

interface MachineRow {
  id: string;
  name: string;
  code: string;
  status: string;
}

async function lockMachine(trx: Knex.Transaction, machineId: string): Promise<MachineRow> {
  // FOR SHARE: a concurrent status change (out of service) waits for this booking, or this booking sees it
  const m = (await trx('machines').where({ id: machineId }).whereNull('retired_at').forShare().first('id', 'name', 'code', 'status')) as MachineRow | undefined;
  if (!m) throw new HttpError(404, 'not_found', 'No such machine.');
  return m;
}

function outOfService(m: MachineRow): HttpError {
  return new HttpError(409, 'machine_out_of_service', `${m.name} is out of service and takes no bookings until a steward puts it back in service.`);
}

/** Serialises quota checks of one person: concurrent bookings by the same person run one after another. */
async function lockPerson(trx: Knex.Transaction, personId: string): Promise<void> {
  await trx.raw("SELECT pg_advisory_xact_lock(hashtextextended('bookings.person:' || ?, 0))", [personId]);
}

async function assertFree(trx: Conn, machineId: string, startsAt: Date, until: Date, exceptId?: string): Promise<void> {
  const q = trx('bookings')
    .where({ machine_id: machineId })
    .whereIn('state', ACTIVE_STATES as unknown as string[])
    .whereRaw("tstzrange(starts_at, occupied_until, '[)') && tstzrange(?, ?, '[)')", [startsAt, until]);
  if (exceptId) q.whereNot('id', exceptId);
  const clash = await q.first('id');
  if (clash) throw slotTaken();
}

function slotTaken(): HttpError {
  return new HttpError(409, 'slot_taken', 'Someone else has that time (or its cool-down) on this machine. Choose another free time.');
}

/** Minutes the person has booked on the machine in the site's week containing `at`. */
async function weeklyMinutes(trx: Conn, personId: string, machineId: string, at: Date, tz: string, exceptId?: string): Promise<number> {
  const week = localWeek(at, tz);
  const q = trx('bookings')
    .where({ person_id: personId, machine_id: machineId })
    .whereIn('kind', ['personal', 'hold'])
    .whereIn('state', QUOTA_STATES)
    .where('starts_at', '>=', week.start)
    .where('starts_at', '<', week.end);
  if (exceptId) q.whereNot('id', exceptId);
  const r = await q.first(trx.raw('coalesce(sum(extract(epoch from (ends_at - starts_at)) / 60), 0)::float8 AS minutes'));
  return Number((r as { minutes?: number } | undefined)?.minutes ?? 0);
}

/** Site settings read on the caller's connection (inside a transaction, never a second pooled connection). */
async function siteSettings(trx: Conn): Promise<{ name: string; timeZone: string }> {
  const row = await trx('site_settings').where({ id: 1 }).first('name', 'time_zone');
  return row ? { name: row.name, timeZone: row.time_zone } : { name: 'Beamwarden', timeZone: 'UTC' };
}

async function ruleContext(machineId: string, from: Date, to: Date, trx: Conn) {
  const [rules, settings, closures] = await Promise.all([getRules(machineId, trx), siteSettings(trx), listClosures(machineId, from, to, trx)]);
  return { rules, hours: rules.hours, timeZone: settings.timeZone, siteName: settings.name, closures };
}

async function insertBooking(trx: Knex.Transaction, row: Record<string, unknown>): Promise<Booking> {
  try {
    // a savepoint, so a refused insert can be answered without poisoning the caller's transaction
    const [r] = await trx.transaction(async (sp) => sp('bookings').insert(row).returning('*'));
    return toBooking(r as Row);
  } catch (err) {
    if (pgCode(err) === PG.exclusionViolation) throw slotTaken();
    throw err;
  }
}

/**
 * Creates a booking for `actor` (the gate, the rules, the quota, the declared materials, the insert). The card
 * hold is an intent recorded in the same transaction (payment-intents.ts): the worker places it even if this
 * process dies right after the commit. The caller (the API route) checks for a failed payment first and may try
 * the hold once at once.
 */
export async function createBooking(actor: Actor, input: BookingInput, now = new Date()): Promise<Booking> {
  // concurrent requests for one slot can deadlock inside the exclusion constraint: the transaction is run again
  return retryOnConflict(() => createBookingRow(actor, input, now));
}

async function createBookingRow(actor: Actor, input: BookingInput, now: Date): Promise<Booking> {
  return transaction(async (trx) => {
    const machine = await lockMachine(trx, input.machineId);
    if (machine.status === 'out of service') throw outOfService(machine);
    const verdict = await canOperate(actor.id, machine.id, input.startsAt, trx);
    if (!verdict.ok) throw new HttpError(403, 'clearance_required', verdict.message);

    const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx);
    const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'personal' }, { now, ...ctx });
    if (broken) throw new HttpError(422, broken.code, broken.message);

    const until = occupiedUntil(input.endsAt, ctx.rules.bufferMinutes);
    await lockPerson(trx, actor.id);
    await assertFree(trx, machine.id, input.startsAt, until);
    const tier = await getTier(actor.id, trx);
    const used = await weeklyMinutes(trx, actor.id, machine.id, input.startsAt, ctx.timeZone);
    const over = checkQuota(used, minutesBetween(input.startsAt, input.endsAt), ctx.rules.quotas[tier]);
    if (over) throw new HttpError(422, over.code, over.message);

    // materials check: every declared material must be allowed on this machine, mode and thickness
    await checkDeclaredMaterials(machine.id, input.materials, trx);

    const booking = await insertBooking(trx, {
      machine_id: machine.id,
      person_id: actor.id,
      kind: 'personal',
      starts_at: input.startsAt,
      ends_at: input.endsAt,
      occupied_until: until,
      notes: input.notes,
    });
    if (input.materials.length) {
      await trx('booking_materials').insert(
        input.materials.map((m) => ({ booking_id: booking.id, material_id: m.materialId, mode: m.mode, thickness_mm: m.thicknessMm })),
      );
    }

    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'booking.created',
      subjectType: 'booking',
      subjectId: booking.id,
      summary: `Booked ${machine.name}`,
      after: { machineId: machine.id, startsAt: booking.startsAt, endsAt: booking.endsAt, materials: input.materials },
    });
    await sendConfirmation(trx, actor.id, booking, machine, ctx.timeZone, ctx.siteName);
    await recordPaymentIntent(trx, { kind: 'booking.hold', bookingId: booking.id });
    return booking;
  });
}

async function formatRange(q: Conn, b: { startsAt: Date; endsAt: Date }, tz: string): Promise<string> {
  return siteFormat(await siteLocale(q), tz).longRange(b.startsAt, b.endsAt);
}

function bookingIcs(b: Booking, machine: { name: string }, siteName: string, cancelled = false): string {
  return buildIcs(`${siteName} bookings`, [
    {
      id: b.id,
      startsAt: b.startsAt,
      endsAt: b.endsAt,
      summary: b.kind === 'class' ? `${machine.name}: class ${b.courseName}` : `${machine.name} booking`,
      description: 'Check in at the machine within 15 minutes of the start, or the booking becomes a no-show. Never leave a running job unattended.',
      location: `${machine.name}, ${siteName}`,
      cancelled,
    },
  ], { method: 'publish' });
}

/** What a booking's calendar event needs: the row's fields, with the sequence the message carries. */
export interface CalendarBooking {
  id: string; kind: string; course_name: string | null; starts_at: Date; ends_at: Date; calendar_sequence: number;
}

/**
 * The .ics attached to a cancellation or bump e-mail: the confirmation's UID, METHOD:CANCEL, STATUS:CANCELLED and
 * the booking's raised SEQUENCE, so the person's calendar app removes (or strikes through) the event.
 */
export function cancellationAttachment(r: CalendarBooking, machineName: string, siteName: string): MailAttachment {
  const ics = buildIcs(`${siteName} bookings`, [
    {
      id: r.id,
      startsAt: r.starts_at,
      endsAt: r.ends_at,
      summary: r.kind === 'class' ? `${machineName}: class ${r.course_name}` : `${machineName} booking`,
      location: `${machineName}, ${siteName}`,
      cancelled: true,
      sequence: r.calendar_sequence,
    },
  ], { method: 'cancel' });
  return { filename: 'booking-cancelled.ics', contentType: 'text/calendar; charset=utf-8; method=CANCEL', content: Buffer.from(ics, 'utf8').toString('base64') };
}

/** The SQL that raises a booking's calendar sequence by one (in the same UPDATE that cancels or bumps it). */
export const raiseSequence = (trx: Conn) => trx.raw('calendar_sequence + 1');

/** E-mails the owner of a cancelled booking (in the caller's transaction), with the cancellation .ics attached. */
async function sendCancellation(trx: Knex.Transaction, r: Row, why: string): Promise<void> {
  if (r.kind === 'hold') return;
  const [person, machine, site] = [
    await trx('people').where({ id: r.person_id }).first('email', 'name'),
    await trx('machines').where({ id: r.machine_id }).first('name'),
    await siteSettings(trx),
  ];
  if (!person || !machine) return;
  const range = await formatRange(trx, { startsAt: r.starts_at, endsAt: r.ends_at }, site.timeZone);
  await queueMail(
    trx,
    person.email,
    `Booking cancelled: ${machine.name}, ${range}`,
    {
      greeting: `Hello ${person.name},`,
      paragraphs: [
        `Your ${r.kind === 'class' ? `class block (${r.course_name ?? 'class'})` : 'booking'} on ${machine.name} on ${range} (${site.timeZone}) is cancelled.`,
        why,
        'The attached calendar file removes it from your calendar.',
      ],
      action: { label: 'See your bookings', url: `${env().PUBLIC_BASE_URL}/book` },
    },
    [cancellationAttachment(r, machine.name, site.name)],
  );
}

async function sendConfirmation(trx: Knex.Transaction, personId: string, b: Booking, machine: MachineRow, tz: string, siteName: string): Promise<void> {
  const person = await trx('people').where({ id: personId }).first('email', 'name');
  if (!person) return;
  const ics = bookingIcs(b, machine, siteName);
  await queueMail(
    trx,
    person.email,
    `Booking confirmed: ${machine.name}, ${await formatRange(trx, b, tz)}`,
    {
      greeting: `Hello ${person.name},`,
      paragraphs: [
        `${machine.name} is booked for you on ${await formatRange(trx, b, tz)} (${tz}).`,
        'Check in at the machine within 15 minutes of the start, or the booking becomes a no-show and the time is released.',
        'The attached calendar file adds the booking to your calendar.',
      ],
      action: { label: 'See your bookings', url: `${env().PUBLIC_BASE_URL}/book` },
      footnote: 'Class 4 laser: keep the extractor and air assist on and never leave a running job unattended.',
    },
    [{ filename: 'booking.ics', contentType: 'text/calendar; charset=utf-8; method=PUBLISH', content: Buffer.from(ics, 'utf8').toString('base64') }],
  );
}

export async function getBooking(id: string, trx: Conn = db()): Promise<Booking | null> {
  const r = (await trx('bookings').where({ id }).first()) as Row | undefined;
  return r ? toBooking(r) : null;
}

/**
 * Cancels a booking: the owner, or a steward or admin. After the cut-off it is flagged late. The money side (a late
 * one is charged the late-cancellation fee, which releases the hold first; an in-time one only releases the hold)
 * is an intent recorded in the same transaction (cancellationIntent); the route may try it at once.
 */
export async function cancelBooking(actor: Actor, id: string, now = new Date()): Promise<Booking> {
  return cancelBookingRow(actor, id, now);
}

async function cancelBookingRow(actor: Actor, id: string, now: Date): Promise<Booking> {
  return transaction(async (trx) => {
    const r = (await trx('bookings').where({ id }).forUpdate().first()) as Row | undefined;
    if (!r) throw new HttpError(404, 'not_found', 'No such booking.');
    const mine = r.person_id === actor.id;
    if (!mine && !hasAnyRole(actor.roles, ['steward', 'admin'])) throw new HttpError(404, 'not_found', 'No such booking.');
    if (r.state !== 'reserved') throw new HttpError(409, 'not_cancellable', `This booking is ${r.state} and cannot be cancelled.`);
    if (r.ends_at <= now) throw new HttpError(409, 'not_cancellable', 'This booking has ended.');
    const rules = await getRules(r.machine_id, trx);
    const late = r.kind !== 'hold' && isLateCancel(r.starts_at, now, rules);
    const [u] = await trx('bookings')
      .where({ id })
      .update({ state: 'cancelled', late_cancel: late, cancelled_at: now, cancelled_by: actor.id, calendar_sequence: raiseSequence(trx), updated_at: trx.fn.now() })
      .returning('*');
    const booking = toBooking(u as Row);
    await sendCancellation(
      trx,
      u as Row,
      `${mine ? 'You cancelled it' : 'A steward or admin cancelled it'}${late && r.kind === 'personal' ? ' after the cancellation cut-off, so a late-cancellation fee may be charged (see your account).' : ': any hold on your card is released.'}`,
    );
    await recordAudit(trx, {
      actorId: actor.id,
      kind: 'booking.cancelled',
      subjectType: 'booking',
      subjectId: id,
      summary: late ? 'Booking cancelled after the cut-off (late)' : 'Booking cancelled',
      before: { state: r.state },
      after: { state: 'cancelled', lateCancel: late },
    });
    if (r.kind === 'hold') await trx('waitlist_entries').where({ hold_booking_id: id }).update({ state: 'withdrawn' });
    await offerFreedTime(trx, r.machine_id, { start: r.starts_at > now ? r.starts_at : now, end: r.ends_at }, now);
    await recordPaymentIntent(trx, cancellationIntent(booking, actor.id));
    return booking;
  });
}

/**
 * Deactivation (people.ts): cancels the person's reserved bookings that have not ended yet, in the caller's
 * transaction, audited one by one, and offers the freed time to the waitlist. Returns the cancelled ids;
 * their card holds are released by the intents recorded here (payment-intents.ts).
 */
export async function cancelFutureBookingsOf(trx: Knex.Transaction, actorId: string, personId: string, now = new Date()): Promise<string[]> {
  const closing = actorId === personId;
  return cancelFutureBookings(trx, actorId, { person_id: personId }, {
    summary: closing ? 'Booking cancelled: the person closed their account' : 'Booking cancelled: the person was deactivated',
    reason: closing ? 'account closed' : 'person deactivated',
    mail: closing ? 'You closed your Beamwarden account, so your bookings are cancelled. You are not charged for them: any hold on your card is released.' : 'Your account was deactivated by an admin, so your bookings are cancelled. You are not charged for them: any hold on your card is released.',
  }, now);
}

/**
 * Retirement (machines.ts): cancels every reserved booking on the machine that has not ended yet, in the caller's
 * transaction, audited one by one; the people whose bookings they were are e-mailed (queued in the transaction)
 * with the admin's reason; nothing is offered to the waitlist (the machine takes no more bookings) and its waitlist
 * entries are withdrawn. Returns the cancelled ids (their holds are released by the intents recorded with them).
 */
export async function cancelFutureBookingsOnMachine(trx: Knex.Transaction, actorId: string, machine: { id: string; name: string }, why: string, now = new Date()): Promise<string[]> {
  const ids = await cancelFutureBookings(trx, actorId, { machine_id: machine.id }, { summary: `Booking cancelled: ${machine.name} was retired`, reason: 'machine retired', offer: false }, now);
  await trx('waitlist_entries').where({ machine_id: machine.id }).whereIn('state', ['waiting', 'offered']).update({ state: 'withdrawn' });
  if (!ids.length) return ids;
  const site = await siteSettings(trx);
  const rows = (await trx('bookings as b').join('people as p', 'p.id', 'b.person_id').whereIn('b.id', ids).whereNot('b.kind', 'hold')
    .select('b.id', 'b.kind', 'b.course_name', 'b.starts_at', 'b.ends_at', 'b.calendar_sequence', 'b.person_id', 'p.email', 'p.name')) as {
    id: string; kind: BookingKind; course_name: string | null; starts_at: Date; ends_at: Date; calendar_sequence: number; person_id: string; email: string; name: string;
  }[];
  for (const r of rows) {
    await queueMail(trx, r.email, `Your booking on ${machine.name} is cancelled: the machine is retired`, {
      greeting: `Hello ${r.name},`,
      paragraphs: [
        `${machine.name} has been retired from use, so your ${r.kind === 'class' ? `class block (${r.course_name ?? 'class'})` : 'booking'} on ${await formatRange(trx, { startsAt: r.starts_at, endsAt: r.ends_at }, site.timeZone)} cannot go ahead.`,
        `The reason given: ${why}`,
        'You are not charged for it: any hold on your card is released.',
        'The attached calendar file removes it from your calendar.',
      ],
      action: { label: 'Book another machine', url: `${env().PUBLIC_BASE_URL}/book` },
    }, [cancellationAttachment(r, machine.name, site.name)]);
  }
  return ids;
}

async function cancelFutureBookings(
  trx: Knex.Transaction,
  actorId: string,
  where: { person_id: string } | { machine_id: string },
  how: { summary: string; reason: string; offer?: boolean; mail?: string },
  now: Date,
): Promise<string[]> {
  const rows = (await trx('bookings')
    .where({ ...where, state: 'reserved' })
    .where('ends_at', '>', now)
    .orderBy('starts_at')
    .forUpdate()
    .select('*')) as Row[];
  for (const r of rows) {
    const [u] = await trx('bookings').where({ id: r.id })
      .update({ state: 'cancelled', late_cancel: false, cancelled_at: now, cancelled_by: actorId, calendar_sequence: raiseSequence(trx), updated_at: trx.fn.now() })
      .returning('*');
    if (how.mail) await sendCancellation(trx, u as Row, how.mail);
    if (r.kind === 'hold') await trx('waitlist_entries').where({ hold_booking_id: r.id }).update({ state: 'withdrawn' });
    await recordAudit(trx, {
      actorId,
      kind: 'booking.cancelled',
      subjectType: 'booking',
      subjectId: r.id,
      summary: how.summary,
      before: { state: 'reserved' },
      after: { state: 'cancelled', lateCancel: false, reason: how.reason },
    });
    if (how.offer !== false) await offerFreedTime(trx, r.machine_id, { start: r.starts_at > now ? r.starts_at : now, end: r.ends_at }, now);
    await recordPaymentIntent(trx, { kind: 'booking.release', bookingId: r.id, reason: how.reason, notify: false, actorId });
  }
  return rows.map((r) => r.id);
}

/** The materials a booking declared. */
export async function bookingMaterials(bookingId: string, trx: Conn = db()): Promise<{ materialId: string; name: string; mode: string; thicknessMm: number }[]> {
  const rows = await trx('booking_materials as bm')
    .join('materials as m', 'm.id', 'bm.material_id')
    .where('bm.booking_id', bookingId)
    .orderBy('bm.id')
    .select('bm.material_id', 'm.name', 'bm.mode', 'bm.thickness_mm');
  return rows.map((r: { material_id: string; name: string; mode: string; thickness_mm: string }) => ({ materialId: r.material_id, name: r.name, mode: r.mode, thicknessMm: Number(r.thickness_mm) }));
}

// ---------------------------------------------------------------------------------------------
// Calendar feed and availability

export interface FeedEvent {
  id: string;
  machineId: string;
  startsAt: Date;
  endsAt: Date;
  occupiedUntil: Date;
  state: BookingState;
  kind: BookingKind;
  mine: boolean;
  /** Whose booking: only shown to instructors, stewards and admins (and to the owner). */
  personName: string | null;
  courseName: string | null;
  notes: string | null;
  lateCancel: boolean;
  /** The viewer's own reserved bookings: what cancelling costs (fee if late, the card hold released). */
  cancelTerms?: CancelTerms;
}

export interface CancelTerms {
  /** The late-cancellation fee with tax, or null when the price version has none (or no price applies). */
  lateFeeMinor: number | null;
  /** The amount held on the card for this booking, released on cancelling; null when nothing is held. */
  heldMinor: number | null;
  currency: string | null;
}

/** The viewer's booked minutes on a machine in the site week holding the feed's first day, and the tier's limit. */
export interface WeekUse {
  weekStart: Date;
  usedMinutes: number;
  limitMinutes: number | null;
}

export interface Feed {
  timeZone: string;
  bookings: FeedEvent[];
  closures: { id: string; machineId: string | null; startsAt: Date; endsAt: Date; reason: string }[];
  machines: { id: string; name: string; status: string; open: Interval[]; slotMinutes: number; minMinutes: number; maxMinutes: number; bufferMinutes: number; cancelCutoffMinutes: number; week: WeekUse }[];
}

/** The calendar feed: active bookings in [from, to) (and the viewer's own, in any state but cancelled), closures, open hours. */
export async function calendarFeed(viewer: Actor, filter: { machineId?: string; from: Date; to: Date }): Promise<Feed> {
  const seesNames = hasAnyRole(viewer.roles, ['instructor', 'steward', 'admin']);
  const settings = await getSettings();
  const mq = db()('machines').whereNull('retired_at').orderBy('name');
  if (filter.machineId) mq.where({ id: filter.machineId });
  const machines = (await mq.select('id', 'name', 'status')) as { id: string; name: string; status: string }[];
  if (filter.machineId && !machines.length) throw new HttpError(404, 'not_found', 'No such machine.');
  const ids = machines.map((m) => m.id);
  const rows = await db()('bookings as b')
    .join('people as p', 'p.id', 'b.person_id')
    .whereIn('b.machine_id', ids)
    .whereRaw("tstzrange(b.starts_at, b.occupied_until, '[)') && tstzrange(?, ?, '[)')", [filter.from, filter.to])
    .where((w) => w.whereIn('b.state', ['reserved', 'checked in', 'completed']).orWhere((m) => m.where('b.person_id', viewer.id).whereIn('b.state', ['no-show'])))
    .orderBy('b.starts_at')
    .select('b.*', 'p.name as person_name');
  const closures = await listClosures(filter.machineId ?? null, filter.from, filter.to);
  const tier = await getTier(viewer.id);
  const week = localWeek(filter.from, settings.timeZone);
  const machinesOut = [];
  for (const m of machines) {
    const rules = await getRules(m.id);
    const mc = closures.filter((c) => c.machineId === null || c.machineId === m.id);
    const used = await weeklyMinutes(db(), viewer.id, m.id, week.start, settings.timeZone);
    machinesOut.push({
      id: m.id,
      name: m.name,
      status: m.status,
      open: openIntervals(filter.from, filter.to, settings.timeZone, rules.hours, mc),
      slotMinutes: rules.slotMinutes,
      minMinutes: rules.minMinutes,
      maxMinutes: rules.maxMinutes,
      bufferMinutes: rules.bufferMinutes,
      cancelCutoffMinutes: rules.cancelCutoffMinutes,
      week: { weekStart: week.start, usedMinutes: Math.round(used), limitMinutes: rules.quotas[tier] ?? null },
    });
  }
  const typed = rows as (Row & { person_name: string })[];
  const terms = await cancelTermsOf(typed.filter((r) => r.person_id === viewer.id && r.state === 'reserved' && r.kind === 'personal'), tier);
  return {
    timeZone: settings.timeZone,
    machines: machinesOut,
    closures: closures.filter((c) => c.machineId === null || ids.includes(c.machineId)),
    bookings: typed.map((r) => {
      const mine = r.person_id === viewer.id;
      return {
        id: r.id,
        machineId: r.machine_id,
        startsAt: r.starts_at,
        endsAt: r.ends_at,
        occupiedUntil: r.occupied_until,
        state: r.state,
        kind: r.kind,
        mine,
        personName: mine || seesNames ? r.person_name : null,
        courseName: r.course_name,
        notes: mine ? r.notes : null,
        lateCancel: r.late_cancel,
        ...(terms.has(r.id) ? { cancelTerms: terms.get(r.id)! } : {}),
      };
    }),
  };
}

/** What cancelling each of these (the viewer's own, reserved) bookings would cost: the late fee and the hold released. */
async function cancelTermsOf(rows: Row[], tier: Awaited<ReturnType<typeof getTier>>): Promise<Map<string, CancelTerms>> {
  const out = new Map<string, CancelTerms>();
  if (!rows.length) return out;
  const held = await heldOnBookings(rows.map((r) => r.id));
  for (const r of rows) {
    let lateFeeMinor: number | null = null;
    let currency: string | null = held.get(r.id)?.currency ?? null;
    try {
      const q = await quoteFor({ machineId: r.machine_id, tier, minutes: 0, at: r.starts_at, lateCancellation: true });
      lateFeeMinor = q.amountMinor > 0 ? q.amountMinor : null;
      currency = q.currency;
    } catch {
      // no price version in force or no rate for this tier: no fee can be said
    }
    out.set(r.id, { lateFeeMinor, heldMinor: held.get(r.id)?.amountMinor ?? null, currency });
  }
  return out;
}

/** Free ranges of a machine in [from, to), by the same rules createBooking applies. */
export async function machineAvailability(machineId: string, from: Date, to: Date, now = new Date()) {
  const m = await db()('machines').where({ id: machineId }).whereNull('retired_at').first('id', 'status');
  if (!m) throw new HttpError(404, 'not_found', 'No such machine.');
  const ctx = await ruleContext(machineId, from, to, db());
  const occupied = (await db()('bookings')
    .where({ machine_id: machineId })
    .whereIn('state', ACTIVE_STATES as unknown as string[])
    .where('starts_at', '<', new Date(to.getTime() + ctx.rules.bufferMinutes * 60_000))
    .where('occupied_until', '>', from)
    .select('starts_at', 'occupied_until')) as { starts_at: Date; occupied_until: Date }[];
  const free =
    m.status === 'out of service'
      ? []
      : freeRanges(from, to, { now, timeZone: ctx.timeZone, rules: ctx.rules, hours: ctx.rules.hours, closures: ctx.closures, occupied: occupied.map((o) => ({ startsAt: o.starts_at, occupiedUntil: o.occupied_until })) });
  return {
    machineId,
    timeZone: ctx.timeZone,
    status: m.status as string,
    rules: publicRules(ctx.rules),
    free: free.map((i) => ({ startsAt: i.start, endsAt: i.end })),
  };
}

export function publicRules(r: MachineRules) {
  return {
    slotMinutes: r.slotMinutes,
    minMinutes: r.minMinutes,
    maxMinutes: r.maxMinutes,
    bufferMinutes: r.bufferMinutes,
    leadMinutes: r.leadMinutes,
    horizonDays: r.horizonDays,
    cancelCutoffMinutes: r.cancelCutoffMinutes,
    quotas: r.quotas,
    hours: r.hours,
  };
}

/** The person's upcoming and recent bookings (for the Book screen's list). */
export async function myBookings(personId: string, from: Date): Promise<(Booking & { machineName: string })[]> {
  const rows = await db()('bookings as b')
    .join('machines as m', 'm.id', 'b.machine_id')
    .where('b.person_id', personId)
    .where('b.ends_at', '>', from)
    .orderBy('b.starts_at')
    .limit(100)
    .select('b.*', 'm.name as machine_name');
  return (rows as (Row & { machine_name: string })[]).map((r) => ({ ...toBooking(r), machineName: r.machine_name }));
}

/** Now and next on each machine, for the Floor. */
export async function nowAndNext(now = new Date()): Promise<Map<string, { current: { startsAt: Date; endsAt: Date; kind: BookingKind } | null; next: { startsAt: Date; endsAt: Date; kind: BookingKind } | null }>> {
  const rows = (await db()('bookings')
    .whereIn('state', ACTIVE_STATES as unknown as string[])
    .where('ends_at', '>', now)
    .whereNot('kind', 'hold')
    .where('starts_at', '<', new Date(now.getTime() + 7 * 86_400_000))
    .orderBy('starts_at')
    .select('machine_id', 'starts_at', 'ends_at', 'kind')) as { machine_id: string; starts_at: Date; ends_at: Date; kind: BookingKind }[];
  const out = new Map<string, { current: { startsAt: Date; endsAt: Date; kind: BookingKind } | null; next: { startsAt: Date; endsAt: Date; kind: BookingKind } | null }>();
  for (const r of rows) {
    const e = out.get(r.machine_id) ?? { current: null, next: null };
    const item = { startsAt: r.starts_at, endsAt: r.ends_at, kind: r.kind };
    if (r.starts_at <= now) e.current ??= item;
    else e.next ??= item;
    out.set(r.machine_id, e);
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Class blocks

export interface ClassBlockInput {
  machineId: string;
  startsAt: Date;
  endsAt: Date;
  courseName: string;
  studentEmails: string[];
  notes: string;
}

/** An instructor books a teaching block; the instructor must be cleared, the students are supervised. */
export async function createClassBlock(actor: Actor, input: ClassBlockInput, now = new Date()): Promise<Booking & { students: { id: string; name: string; email: string }[] }> {
  return transaction(async (trx) => {
    const machine = await lockMachine(trx, input.machineId);
    if (machine.status === 'out of service') throw outOfService(machine);
    const verdict = await canOperate(actor.id, machine.id, input.startsAt, trx);
    if (!verdict.ok) throw new HttpError(403, 'clearance_required', verdict.message);
    const emails = [...new Set(input.studentEmails.map((e) => e.toLowerCase()))];
    const students = emails.length
      ? ((await trx('people').whereRaw('lower(email) = ANY(?)', [emails]).where({ active: true }).select('id', 'name', 'email')) as { id: string; name: string; email: string }[])
      : [];
    const missing = emails.filter((e) => !students.some((s) => s.email.toLowerCase() === e));
    if (missing.length) {
      throw new HttpError(422, 'invalid', 'Some students have no account.', { studentEmails: `No active account for: ${missing.join(', ')}` });
    }
    const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx);
    const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'class' }, { now, ...ctx });
    if (broken) throw new HttpError(422, broken.code, broken.message);
    const until = occupiedUntil(input.endsAt, ctx.rules.bufferMinutes);
    await assertFree(trx, machine.id, input.startsAt, until);
    const booking = await insertBooking(trx, {
      machine_id: machine.id,
      person_id: actor.id,
      kind: 'class',
      course_name: input.courseName,
      starts_at: input.startsAt,
      ends_at: input.endsAt,
      occupied_until: until,
      notes: input.notes,
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
export async function reserveClassTime(trx: Knex.Transaction, actorId: string, input: { machineId: string; startsAt: Date; endsAt: Date; courseName: string; notes: string }, now = new Date()): Promise<Booking> {
  const machine = await lockMachine(trx, input.machineId);
  if (machine.status === 'out of service') throw outOfService(machine);
  const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx);
  const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'class' }, { now, ...ctx });
  if (broken) throw new HttpError(422, broken.code, broken.message);
  const until = occupiedUntil(input.endsAt, ctx.rules.bufferMinutes);
  await assertFree(trx, machine.id, input.startsAt, until);
  const booking = await insertBooking(trx, {
    machine_id: machine.id, person_id: actorId, kind: 'class', course_name: input.courseName,
    starts_at: input.startsAt, ends_at: input.endsAt, occupied_until: until, notes: input.notes,
  });
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

// ---------------------------------------------------------------------------------------------
// Waitlist

function hashToken(token: string): string {
  return crypto.createHash('sha256').update(token).digest('hex');
}

export async function joinWaitlist(actor: Actor, input: { machineId: string; startsAt: Date; endsAt: Date }, now = new Date()) {
  return transaction(async (trx) => {
    const machine = await lockMachine(trx, input.machineId);
    const verdict = await canOperate(actor.id, machine.id, input.startsAt, trx);
    if (!verdict.ok) throw new HttpError(403, 'clearance_required', verdict.message);
    const ctx = await ruleContext(machine.id, input.startsAt, input.endsAt, trx);
    const broken = checkRequest({ startsAt: input.startsAt, endsAt: input.endsAt, kind: 'personal' }, { now, ...ctx });
    if (broken) throw new HttpError(422, broken.code, broken.message);
    const dup = await trx('waitlist_entries')
      .where({ machine_id: machine.id, person_id: actor.id, starts_at: input.startsAt, ends_at: input.endsAt })
      .whereIn('state', ['waiting', 'offered'])
      .first('id');
    if (dup) throw new HttpError(409, 'already_waiting', 'You are already on the waitlist for that time.');
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
      if (err instanceof HttpError && err.code === 'slot_taken') continue;
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
    if (!e || e.person_id !== actor.id) throw new HttpError(404, 'not_found', 'This claim link is not valid for you.');
    if (e.state !== 'offered') throw new HttpError(409, 'claim_expired', 'This offer has expired or was already used.');
    const hold = (await trx('bookings').where({ id: e.hold_booking_id }).forUpdate().first()) as Row | undefined;
    if (!hold || hold.state !== 'reserved' || hold.kind !== 'hold' || (hold.hold_expires_at && hold.hold_expires_at < now)) {
      throw new HttpError(409, 'claim_expired', 'The 15 minutes to claim this time have passed.');
    }
    const machine = await lockMachine(trx, e.machine_id);
    if (machine.status === 'out of service') throw outOfService(machine);
    const verdict = await canOperate(actor.id, machine.id, hold.starts_at, trx);
    if (!verdict.ok) throw new HttpError(403, 'clearance_required', verdict.message);
    const settings = await siteSettings(trx);
    await lockPerson(trx, actor.id);
    const rules = await getRules(machine.id, trx);
    const used = await weeklyMinutes(trx, actor.id, machine.id, hold.starts_at, settings.timeZone, hold.id);
    const over = checkQuota(used, minutesBetween(hold.starts_at, hold.ends_at), rules.quotas[await getTier(actor.id, trx)]);
    if (over) throw new HttpError(422, over.code, over.message);
    const [u] = await trx('bookings').where({ id: hold.id }).update({ kind: 'personal', hold_expires_at: null, updated_at: trx.fn.now() }).returning('*');
    await trx('waitlist_entries').where({ id: e.id }).update({ state: 'claimed' });
    const booking = toBooking(u as Row);
    await recordAudit(trx, { actorId: actor.id, kind: 'booking.claimed', subjectType: 'booking', subjectId: booking.id, summary: `Claimed a waitlist offer on ${machine.name}` });
    await sendConfirmation(trx, actor.id, booking, machine, settings.timeZone, settings.name);
    return booking;
  });
}

// ---------------------------------------------------------------------------------------------
// The sweep (run every minute by the worker): no-shows and expired holds

export async function sweepBookings(now = new Date()): Promise<{ noShows: number; expiredHolds: number }> {
  // each personal no-show is charged the no-show fee (which releases its hold first): an intent recorded with it
  const r = await sweepRows(now);
  return { noShows: r.noShows, expiredHolds: r.expiredHolds };
}

async function sweepRows(now: Date): Promise<{ noShows: number; expiredHolds: number; noShowBookings: Row[] }> {
  return transaction(async (trx) => {
    const late = (await trx('bookings')
      .where({ state: 'reserved' })
      .whereIn('kind', ['personal', 'class'])
      .whereNull('checked_in_at')
      // an induction session's machine time is not checked in at the machine: it is held to its end
      .whereNotExists((q) => q.select(trx.raw('1')).from('induction_sessions as s').whereRaw('s.booking_id = bookings.id'))
      .where('starts_at', '<=', new Date(now.getTime() - NO_SHOW_AFTER_MINUTES * 60_000))
      .forUpdate()
      .skipLocked()
      .select('*')) as Row[];
    for (const r of late) {
      await trx('bookings').where({ id: r.id }).update({ state: 'no-show', updated_at: trx.fn.now() });
      await recordAudit(trx, {
        actorId: null,
        kind: 'booking.no_show',
        subjectType: 'booking',
        subjectId: r.id,
        summary: 'Not checked in 15 minutes after the start: no-show, remaining time released',
        before: { state: 'reserved' },
        after: { state: 'no-show' },
      });
      await offerFreedTime(trx, r.machine_id, { start: now, end: r.ends_at }, now);
      if (r.kind === 'personal') await recordPaymentIntent(trx, { kind: 'booking.fee', bookingId: r.id, fee: 'no_show' });
    }
    const holds = (await trx('bookings')
      .where({ state: 'reserved', kind: 'hold' })
      .where('hold_expires_at', '<=', now)
      .forUpdate()
      .skipLocked()
      .select('*')) as Row[];
    for (const h of holds) {
      await trx('bookings').where({ id: h.id }).update({ state: 'cancelled', cancelled_at: now, updated_at: trx.fn.now() });
      await recordPaymentIntent(trx, { kind: 'booking.release', bookingId: h.id, reason: 'waitlist offer expired', notify: false });
      await trx('waitlist_entries').where({ hold_booking_id: h.id }).update({ state: 'expired' });
      await offerFreedTime(trx, h.machine_id, { start: h.starts_at > now ? h.starts_at : now, end: h.ends_at }, now);
    }
    return { noShows: late.length, expiredHolds: holds.length, noShowBookings: late };
  });
}

// ---------------------------------------------------------------------------------------------
// Private calendar feeds

export async function feedStatus(personId: string): Promise<{ active: boolean; createdAt: Date | null }> {
  const r = await db()('calendar_feeds').where({ person_id: personId }).first('created_at');
  return { active: !!r, createdAt: r?.created_at ?? null };
}

/** Creates (or replaces, revoking the old URL) the person's private feed; the token is shown once. */
export async function rotateFeedToken(personId: string): Promise<{ url: string; token: string }> {
  const token = crypto.randomBytes(24).toString('base64url');
  await transaction(async (trx) => {
    await trx('calendar_feeds')
      .insert({ person_id: personId, token_hash: hashToken(token), created_at: trx.fn.now() })
      .onConflict('person_id')
      .merge();
    await recordAudit(trx, { actorId: personId, kind: 'calendar_feed.created', subjectType: 'person', subjectId: personId, summary: 'Private calendar feed URL created (any earlier URL revoked)' });
  });
  return { token, url: `${env().PUBLIC_BASE_URL}/api/calendar/${token}.ics` };
}

export async function revokeFeed(personId: string): Promise<void> {
  await transaction(async (trx) => {
    await trx('calendar_feeds').where({ person_id: personId }).delete();
    await recordAudit(trx, { actorId: personId, kind: 'calendar_feed.revoked', subjectType: 'person', subjectId: personId, summary: 'Private calendar feed URL revoked' });
  });
}

/** How often a subscribed calendar is asked to fetch the feed again: an hour (REFRESH-INTERVAL and X-PUBLISHED-TTL). */
export const FEED_REFRESH_SECONDS = 3600;

/** The .ics document of a feed token (null when the token is unknown or revoked). */
export async function feedIcs(token: string, now = new Date()): Promise<string | null> {
  if (!/^[A-Za-z0-9_-]{20,64}$/.test(token)) return null;
  const f = await db()('calendar_feeds').where({ token_hash: hashToken(token) }).first('person_id');
  if (!f) return null;
  const settings = await getSettings();
  const rows = (await db()('bookings as b')
    .join('machines as m', 'm.id', 'b.machine_id')
    .where('b.person_id', f.person_id)
    .where('b.ends_at', '>', new Date(now.getTime() - 30 * 86_400_000))
    // cancelled and bumped bookings are left out: a subscribed calendar drops them at its next refresh
    .whereIn('b.state', ['reserved', 'checked in', 'completed'])
    .whereNot('b.kind', 'hold')
    .orderBy('b.starts_at')
    .limit(1000)
    .select('b.*', 'm.name as machine_name')) as (Row & { machine_name: string })[];
  return buildIcs(
    `${settings.name}: my bookings`,
    rows.map((r) => ({
      id: r.id,
      startsAt: r.starts_at,
      endsAt: r.ends_at,
      summary: r.kind === 'class' ? `${r.machine_name}: class ${r.course_name}` : `${r.machine_name} booking`,
      location: `${r.machine_name}, ${settings.name}`,
      sequence: r.calendar_sequence,
    })),
    { stamp: now, refreshSeconds: FEED_REFRESH_SECONDS },
  );
}

export { bookingIcs };
