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
  // One pass over the period's bookings and sessions (not one probe per machine and week): each booking is split
  // into the weeks it overlaps — width_bucket finds the week of its (clipped) start and end among the week starts,
  // which are contiguous from the period's start to its end — and its minutes in each are summed per machine and week.
  const starts = weeks.map((w) => w.start);
  const ends = weeks.map((w) => w.end);
  const lastEnd = ends[ends.length - 1]!;
  const measured = await db().raw(
    `WITH w AS (SELECT ?::timestamptz[] AS starts, ?::timestamptz[] AS ends),
     booked AS (
       SELECT b.machine_id, k.k, sum(extract(epoch FROM least(b.ends_at, w.ends[k.k]) - greatest(b.starts_at, w.starts[k.k]))) / 60 AS minutes
       FROM bookings b
       CROSS JOIN w
       CROSS JOIN LATERAL generate_series(width_bucket(greatest(b.starts_at, w.starts[1]), w.starts),
                                          width_bucket(least(b.ends_at, w.ends[cardinality(w.ends)]) - interval '1 microsecond', w.starts)) AS k(k)
       WHERE b.machine_id = ANY(?::uuid[]) AND b.state = ANY(?::text[]) AND b.kind <> 'hold'
         AND tstzrange(b.starts_at, b.occupied_until, '[)') && tstzrange(?, ?, '[)')
         AND b.starts_at < ? AND b.ends_at > ?
       GROUP BY b.machine_id, k.k
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
    [starts, ends, ids, [...BOOKED_STATES], scope.period.start, lastEnd, lastEnd, scope.period.start, ids, scope.period.start, lastEnd],
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
  const openMinutesOf = (c: { machineId: string; start: Date; end: Date }): number => {
    const hours = hoursOf.get(c.machineId) ?? [];
    const closures = closuresOf(c.machineId);
    const key = JSON.stringify([c.start, c.end, hours, closures]);
    let open = openOf.get(key);
    if (open === undefined) {
      open = openIntervals(c.start, c.end, scope.timeZone, hours, closures).reduce((sum, iv) => sum + minutesBetween(iv.start, iv.end), 0);
      openOf.set(key, open);
    }
    return open;
  };
  const rows: UtilisationRow[] = cells.map((c) => {
    const open = openMinutesOf(c);
    const m = byCell.get(`${c.machineId} ${weekIndex.get(c.start.getTime())}`) ?? { booked: 0, beam: 0 };
    const openMinutes = Math.round(open);
    const booked = Math.round(m.booked);
    const beam = Math.round(m.beam);
    return {
      machine_id: c.machineId,
      machine: name.get(c.machineId) ?? '',
      week_start: zonedDate(c.start, scope.timeZone),
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

