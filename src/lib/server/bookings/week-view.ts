/** The Book screen's reads: the week feed of bookings, closures and open hours, free ranges, my bookings, now and next. */
import { db, genericPlanDb, prepared } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { closuresFromJson, closuresJsonSql, getRulesOfStamped, RULES_STAMP_SQL, type ClosureRow } from '@lib/server/booking-rules';
import { type Interval, type MachineRules } from '@lib/availability';
import type { Json } from '@lib/json';
import { isoFromPgJson } from '@lib/server/pg-types';
import type { Tier } from '@lib/vocabulary';
import { getSettings } from '@lib/server/settings';
import { heldOnBookings } from '@lib/server/payment-intents';
import { quoteFor } from '@lib/server/prices';
import { hasAnyRole } from '@lib/roles';
import { freeRanges, localWeek, openIntervals } from '@lib/availability';
import { ACTIVE_STATES, toBooking, type Actor, type Booking, type BookingKind, type Row } from './records';
import { ruleContext, weekUseFromJson, weekUseJsonSql } from './gate';
import type { CancelTerms, Feed } from '@lib/booking-feed';

export type { CancelTerms, Feed, FeedEvent, WeekUse } from '@lib/booking-feed';

type FeedBookingJson = {
  id: string; machine_id: string; person_id: string; starts_at: string; ends_at: string; occupied_until: string;
  state: Row['state']; kind: BookingKind; course_name: string | null; notes: string; late_cancel: boolean; person_name: string;
};

/** The machines' open ranges of a feed, by rules stamp, machine, period and zone: the same week is shaded again and again. */
const openKept = new Map<string, Json<Interval>[]>();
const OPEN_KEPT_MAX = 500;

/**
 * The calendar feed: active bookings in [from, to) (and the viewer's own, in any state but cancelled), closures, open
 * hours. One statement reads the machines, the bookings, the closures, the viewer's tier and week use and the booking
 * rules' stamp; the rules (and each machine's open ranges for the period) come from memory while the stamp is unchanged.
 * Built in its JSON form (times as ISO text, straight from PostgreSQL's json): it goes to the browser as it is, and a
 * week of bookings made into Dates and written out again cost more than the rest of the request.
 */
export async function calendarFeed(viewer: Actor, filter: { machineId?: string; from: Date; to: Date }): Promise<Json<Feed>> {
  const seesNames = hasAnyRole(viewer.roles, ['instructor', 'steward', 'admin']);
  const settings = await getSettings();
  const week = localWeek(filter.from, settings.timeZone);
  const one = filter.machineId ?? null;
  const machinesSql = one ? 'SELECT id, name, status FROM machines WHERE retired_at IS NULL AND id = ?' : 'SELECT id, name, status FROM machines WHERE retired_at IS NULL';
  const closures = closuresJsonSql(one ? 'SELECT id FROM ms' : null);
  const use = weekUseJsonSql('SELECT id FROM ms');
  // the bookings as json of plain rows: PostgreSQL writes a row's json several times faster than json_build_object's.
  // A named statement on the generic-plan pool: planned once per connection, not for every call (decision 0477).
  const { rows } = await prepared(genericPlanDb().raw(
    `WITH ms AS MATERIALIZED (${machinesSql})
     SELECT (SELECT json_agg(json_build_object('id', ms.id, 'name', ms.name, 'status', ms.status) ORDER BY ms.name) FROM ms) AS machines,
            ${RULES_STAMP_SQL} AS rules_stamp,
            ${closures.sql} AS closures,
            ${use.sql} AS week_use,
            (SELECT json_agg(fb ORDER BY fb.starts_at)
               FROM (SELECT b.id, b.machine_id, b.person_id, b.starts_at, b.ends_at, b.occupied_until, b.state, b.kind, b.course_name, b.notes,
                            b.late_cancel, p.name AS person_name
                       FROM bookings b JOIN people p ON p.id = b.person_id
                      WHERE b.machine_id ${one ? '= ?' : 'IN (SELECT id FROM ms)'}
                        AND tstzrange(b.starts_at, b.occupied_until, '[)') && tstzrange(?, ?, '[)')
                        AND (b.state IN ('reserved', 'checked in', 'completed') OR (b.person_id = ? AND b.state = 'no-show'))) fb) AS bookings`,
    [
      ...(one ? [one] : []),
      ...closures.bindings(filter.from, filter.to),
      ...use.bindings(viewer.id, week),
      ...(one ? [one] : []), filter.from, filter.to, viewer.id,
    ],
  ));
  const r = rows[0] as { machines: { id: string; name: string; status: string }[] | null; rules_stamp: string | null; closures: unknown; week_use: unknown; bookings: FeedBookingJson[] | null };
  const machines = r.machines ?? [];
  if (filter.machineId && !machines.length) throw new DomainError('not_found', 'not_found', 'No such machine.');
  const ids = machines.map((m) => m.id);
  const closureRows = closuresFromJson(r.closures);
  const { tier, usedOf } = weekUseFromJson(r.week_use);
  const rulesOf = await getRulesOfStamped(ids, r.rules_stamp);
  const weekStart = week.start.toISOString();
  const machinesOut = [];
  for (const m of machines) {
    const rules = rulesOf.get(m.id)!;
    const used = usedOf.get(m.id) ?? 0;
    machinesOut.push({
      id: m.id,
      name: m.name,
      status: m.status,
      open: openOf(m.id, r.rules_stamp, filter.from, filter.to, settings.timeZone, rules, closureRows),
      slotMinutes: rules.slotMinutes,
      minMinutes: rules.minMinutes,
      maxMinutes: rules.maxMinutes,
      bufferMinutes: rules.bufferMinutes,
      cancelCutoffMinutes: rules.cancelCutoffMinutes,
      week: { weekStart, usedMinutes: Math.round(used), limitMinutes: rules.quotas[tier] ?? null },
    });
  }
  const booked = r.bookings ?? [];
  const terms = await cancelTermsOf(booked.filter((b) => b.person_id === viewer.id && b.state === 'reserved' && b.kind === 'personal'), tier);
  return {
    timeZone: settings.timeZone,
    machines: machinesOut,
    closures: closureRows
      .filter((c) => c.machineId === null || ids.includes(c.machineId))
      .map((c) => ({ ...c, startsAt: c.startsAt.toISOString(), endsAt: c.endsAt.toISOString() })),
    bookings: booked.map((b) => {
      const mine = b.person_id === viewer.id;
      return {
        id: b.id,
        machineId: b.machine_id,
        startsAt: isoFromPgJson(b.starts_at),
        endsAt: isoFromPgJson(b.ends_at),
        occupiedUntil: isoFromPgJson(b.occupied_until),
        state: b.state,
        kind: b.kind,
        mine,
        personName: mine || seesNames ? b.person_name : null,
        courseName: b.course_name,
        notes: mine ? b.notes : null,
        lateCancel: b.late_cancel,
        ...(terms.has(b.id) ? { cancelTerms: terms.get(b.id)! } : {}),
      };
    }),
  };
}

/** A machine's open ranges in [from, to), as JSON: worked out once per rules stamp (which covers hours and closures), period and zone. */
function openOf(machineId: string, stamp: string | null, from: Date, to: Date, tz: string, rules: MachineRules, closures: readonly ClosureRow[]): Json<Interval>[] {
  const key = stamp ? `${stamp} ${machineId} ${from.getTime()} ${to.getTime()} ${tz}` : null;
  let open = key ? openKept.get(key) : undefined;
  if (!open) {
    const mc = closures.filter((c) => c.machineId === null || c.machineId === machineId);
    open = openIntervals(from, to, tz, rules.hours, mc).map((i) => ({ start: i.start.toISOString(), end: i.end.toISOString() }));
    if (key) {
      if (openKept.size >= OPEN_KEPT_MAX) openKept.clear();
      openKept.set(key, open);
    }
  }
  return open;
}

/** What cancelling each of these (the viewer's own, reserved) bookings would cost: the late fee and the hold released. */
async function cancelTermsOf(rows: { id: string; machine_id: string; starts_at: string }[], tier: Tier): Promise<Map<string, CancelTerms>> {
  const out = new Map<string, CancelTerms>();
  if (!rows.length) return out;
  const held = await heldOnBookings(rows.map((r) => r.id));
  for (const r of rows) {
    let lateFeeMinor: number | null = null;
    let currency: string | null = held.get(r.id)?.currency ?? null;
    try {
      const q = await quoteFor({ machineId: r.machine_id, tier, minutes: 0, at: new Date(r.starts_at), lateCancellation: true });
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
