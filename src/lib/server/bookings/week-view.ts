/** The Book screen's reads: the week feed of bookings, closures and open hours, free ranges, my bookings, now and next. */
import { db } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { getRulesOf, listClosures } from '@lib/server/booking-rules';
import { type MachineRules } from '@lib/availability';
import type { Tier } from '@lib/vocabulary';
import { getSettings } from '@lib/server/settings';
import { heldOnBookings } from '@lib/server/payment-intents';
import { quoteFor } from '@lib/server/prices';
import { hasAnyRole } from '@lib/roles';
import { freeRanges, localWeek, openIntervals } from '@lib/availability';
import { ACTIVE_STATES, toBooking, type Actor, type Booking, type BookingKind, type Row } from './records';
import { ruleContext, tierAndWeeklyMinutes } from './gate';
import type { CancelTerms, Feed } from '@lib/booking-feed';

export type { CancelTerms, Feed, FeedEvent, WeekUse } from '@lib/booking-feed';

/** The calendar feed: active bookings in [from, to) (and the viewer's own, in any state but cancelled), closures, open hours. */
export async function calendarFeed(viewer: Actor, filter: { machineId?: string; from: Date; to: Date }): Promise<Feed> {
  const seesNames = hasAnyRole(viewer.roles, ['instructor', 'steward', 'admin']);
  const settings = await getSettings();
  const mq = db()('machines').whereNull('retired_at').orderBy('name');
  if (filter.machineId) mq.where({ id: filter.machineId });
  const machines = (await mq.select('id', 'name', 'status')) as { id: string; name: string; status: string }[];
  if (filter.machineId && !machines.length) throw new DomainError('not_found', 'not_found', 'No such machine.');
  const ids = machines.map((m) => m.id);
  const rows = await db()('bookings as b')
    .join('people as p', 'p.id', 'b.person_id')
    .whereIn('b.machine_id', ids)
    .whereRaw("tstzrange(b.starts_at, b.occupied_until, '[)') && tstzrange(?, ?, '[)')", [filter.from, filter.to])
    .where((w) => w.whereIn('b.state', ['reserved', 'checked in', 'completed']).orWhere((m) => m.where('b.person_id', viewer.id).whereIn('b.state', ['no-show'])))
    .orderBy('b.starts_at')
    .select('b.*', 'p.name as person_name');
  const closures = await listClosures(filter.machineId ?? null, filter.from, filter.to);
  const week = localWeek(filter.from, settings.timeZone);
  // the viewer's tier and booked minutes, and every machine's rules: one statement each, whatever the number of machines
  const { tier, usedOf } = await tierAndWeeklyMinutes(viewer.id, ids, week);
  const rulesOf = await getRulesOf(ids);
  const machinesOut = [];
  for (const m of machines) {
    const rules = rulesOf.get(m.id)!;
    const mc = closures.filter((c) => c.machineId === null || c.machineId === m.id);
    const used = usedOf.get(m.id) ?? 0;
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
async function cancelTermsOf(rows: Row[], tier: Tier): Promise<Map<string, CancelTerms>> {
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
  if (!m) throw new DomainError('not_found', 'not_found', 'No such machine.');
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
