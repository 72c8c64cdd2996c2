/**
 * The utilisation report: open, booked and beam minutes per machine and week. The aggregates are computed by
 * PostgreSQL in one pass over the period's bookings; opening hours and closures are turned into open minutes by the
 * pure availability module (the same rules the booking screen uses). Beside it: reports.ts (the other reports).
 */
import { db } from './db';
import { int, scopeMachines, type ReportScope } from './reports';
import { openIntervals, minutesBetween, type Closure, type WeeklyHours } from '@lib/availability';
import { BOOKED_STATES, periodWeeks, share, type UtilisationRow } from '@lib/reports';
import { zonedDate } from '@lib/time';

// ---------------------------------------------------------------------------------------------
// Utilisation

export interface UtilisationReport {
  rows: UtilisationRow[];
  totals: { openMinutes: number; bookedMinutes: number; beamMinutes: number; bookedShare: number | null; beamShare: number | null };
}

/**
 * Per machine and site week (clipped to the period): open minutes (weekly hours minus closures, from the
 * pure availability module), booked minutes (bookings held for someone, clipped to the week) and measured
 * beam minutes (machine sessions by check-in time), with each as a share of the open minutes.
 */
export async function utilisationReport(scope: ReportScope): Promise<UtilisationReport> {
  const machines = await scopeMachines(scope);
  const weeks = periodWeeks(scope.period, scope.timeZone);
  if (!machines.length || !weeks.length) return { rows: [], totals: { openMinutes: 0, bookedMinutes: 0, beamMinutes: 0, bookedShare: null, beamShare: null } };
  const ids = machines.map((m) => m.id);
  const [hoursRows, closureRows] = await Promise.all([
    db()('opening_hours').whereIn('machine_id', ids).select('machine_id', 'weekday', 'opens_minute', 'closes_minute'),
    db()('closures')
      .where((q) => q.whereIn('machine_id', ids).orWhereNull('machine_id'))
      .where('starts_at', '<', scope.period.end)
      .where('ends_at', '>', scope.period.start)
      .select('machine_id', 'starts_at', 'ends_at', 'reason'),
  ]);
  const cells: { machineId: string; start: Date; end: Date }[] = [];
  for (const m of machines) for (const w of weeks) cells.push({ machineId: m.id, start: w.start, end: w.end });
  // One pass over the period's bookings and sessions (not one probe per machine and week). Each booking is clipped to
  // the period and placed by width_bucket among the week starts (contiguous from the period's start to its end): k1
  // the week of its start, k2 the week of its end. Bookings are first summed per machine, k1 and k2 (count, and their
  // clipped starts and ends as offsets from the period's start), and only those few groups are spread over their
  // weeks: a group within one week has (ends − starts); one crossing weeks has its first week up to that week's end,
  // its last week from that week's start, and whole weeks between. The sums are exact (interval and numeric
  // arithmetic), so the minutes equal clipping every booking to every week it overlaps.
  // Bookings are found as those starting in the period plus those running into its start (the range index).
  // `w` NOT MATERIALIZED: its arrays become plain parameters, so the plan may scan and sum in parallel workers.
  const starts = weeks.map((w) => w.start);
  const ends = weeks.map((w) => w.end);
  const lastEnd = ends[ends.length - 1]!;
  const from = scope.period.start;
  const states = [...BOOKED_STATES];
  const measured = await db().raw(
    `WITH w AS NOT MATERIALIZED (SELECT ?::timestamptz[] AS starts, ?::timestamptz[] AS ends),
     picked AS (
       SELECT b.machine_id, b.starts_at, b.ends_at FROM bookings b
       WHERE b.machine_id = ANY(?::uuid[]) AND b.state = ANY(?::text[]) AND b.kind <> 'hold' AND b.starts_at >= ? AND b.starts_at < ?
       UNION ALL
       SELECT b.machine_id, b.starts_at, b.ends_at FROM bookings b
       WHERE b.machine_id = ANY(?::uuid[]) AND b.state = ANY(?::text[]) AND b.kind <> 'hold' AND b.starts_at < ? AND b.ends_at > ?
         AND tstzrange(b.starts_at, b.occupied_until, '[)') @> ?::timestamptz
     ),
     clipped AS (
       SELECT p.machine_id, greatest(p.starts_at, w.starts[1]) AS s, least(p.ends_at, w.ends[cardinality(w.ends)]) AS e
       FROM picked p CROSS JOIN w
     ),
     grouped AS (
       SELECT c.machine_id, width_bucket(c.s, w.starts) AS k1, width_bucket(c.e - interval '1 microsecond', w.starts) AS k2,
              count(*) AS n, extract(epoch FROM sum(c.s - w.starts[1])) AS s, extract(epoch FROM sum(c.e - w.starts[1])) AS e
       FROM clipped c CROSS JOIN w
       GROUP BY 1, 2, 3
     ),
     booked AS (
       SELECT g.machine_id, k.k,
              sum(CASE WHEN g.k1 = g.k2 THEN g.e - g.s
                       WHEN k.k = g.k1 THEN g.n * extract(epoch FROM w.ends[k.k] - w.starts[1]) - g.s
                       WHEN k.k = g.k2 THEN g.e - g.n * extract(epoch FROM w.starts[k.k] - w.starts[1])
                       ELSE g.n * extract(epoch FROM w.ends[k.k] - w.starts[k.k]) END) / 60 AS minutes
       FROM grouped g CROSS JOIN w CROSS JOIN LATERAL generate_series(g.k1, g.k2) AS k(k)
       GROUP BY 1, 2
     ),
     beam AS (
       SELECT s.machine_id, width_bucket(s.checked_in_at, w.starts) AS k, sum(s.beam_minutes) AS minutes
       FROM machine_sessions s CROSS JOIN w
       WHERE s.machine_id = ANY(?::uuid[]) AND s.checked_in_at >= ? AND s.checked_in_at < ?
       GROUP BY 1, 2
     )
     SELECT coalesce(booked.machine_id, beam.machine_id) AS machine_id, coalesce(booked.k, beam.k) AS k,
            coalesce(booked.minutes, 0) AS booked, coalesce(beam.minutes, 0) AS beam
     FROM booked FULL JOIN beam ON beam.machine_id = booked.machine_id AND beam.k = booked.k`,
    [starts, ends, ids, states, from, lastEnd, ids, states, from, from, from, ids, from, lastEnd],
  );
  const byCell = new Map<string, { booked: number; beam: number }>();
  for (const r of measured.rows as { machine_id: string; k: number; booked: string; beam: string }[]) {
    byCell.set(`${r.machine_id} ${r.k}`, { booked: Number(r.booked), beam: Number(r.beam) });
  }
  const weekIndex = new Map(weeks.map((w, i) => [w.start.getTime(), i + 1]));

  const hoursOf = new Map<string, WeeklyHours[]>();
  for (const h of hoursRows as { machine_id: string; weekday: number; opens_minute: number; closes_minute: number }[]) {
    const list = hoursOf.get(h.machine_id) ?? [];
    list.push({ weekday: h.weekday, opensMinute: h.opens_minute, closesMinute: h.closes_minute });
    hoursOf.set(h.machine_id, list);
  }
  const closuresOf = (machineId: string): Closure[] =>
    (closureRows as { machine_id: string | null; starts_at: Date; ends_at: Date; reason: string }[])
      .filter((c) => c.machine_id === null || c.machine_id === machineId)
      .map((c) => ({ startsAt: c.starts_at, endsAt: c.ends_at, reason: c.reason }));

  const name = new Map(machines.map((m) => [m.id, m.name]));
  // machines with the same hours and closures have the same open minutes in a week: worked out once per week
  const openOf = new Map<string, number>();
  const shapeOf = new Map(machines.map((m) => {
    const hours = hoursOf.get(m.id) ?? [];
    const closures = closuresOf(m.id);
    return [m.id, { hours, closures, key: JSON.stringify([hours, closures]) }];
  }));
  const openMinutesOf = (c: { machineId: string; start: Date; end: Date }): number => {
    const { hours, closures, key: shape } = shapeOf.get(c.machineId)!;
    const key = `${c.start.getTime()} ${c.end.getTime()} ${shape}`;
    let open = openOf.get(key);
    if (open === undefined) {
      open = openIntervals(c.start, c.end, scope.timeZone, hours, closures).reduce((sum, iv) => sum + minutesBetween(iv.start, iv.end), 0);
      openOf.set(key, open);
    }
    return open;
  };
  const weekStarts = new Map(weeks.map((w) => [w.start.getTime(), zonedDate(w.start, scope.timeZone)]));
  const weekStartOf = (d: Date) => weekStarts.get(d.getTime()) ?? zonedDate(d, scope.timeZone);
  const rows: UtilisationRow[] = cells.map((c) => {
    const open = openMinutesOf(c);
    const m = byCell.get(`${c.machineId} ${weekIndex.get(c.start.getTime())}`) ?? { booked: 0, beam: 0 };
    const openMinutes = Math.round(open);
    const booked = Math.round(m.booked);
    const beam = Math.round(m.beam);
    return {
      machine_id: c.machineId,
      machine: name.get(c.machineId) ?? '',
      week_start: weekStartOf(c.start),
      open_minutes: openMinutes,
      booked_minutes: booked,
      beam_minutes: beam,
      booked_share: share(booked, openMinutes),
      beam_share: share(beam, openMinutes),
    };
  });
  const t = rows.reduce((a, r) => ({ open: a.open + r.open_minutes, booked: a.booked + r.booked_minutes, beam: a.beam + r.beam_minutes }), { open: 0, booked: 0, beam: 0 });
  return {
    rows,
    totals: { openMinutes: t.open, bookedMinutes: t.booked, beamMinutes: t.beam, bookedShare: share(t.booked, t.open), beamShare: share(t.beam, t.open) },
  };
}

