/**
 * Reports: every aggregate is computed by PostgreSQL (GROUP BY, FILTER, window functions); only the
 * opening hours and closures — a machine's configuration, a few dozen rows — are read into JavaScript,
 * where the pure availability module turns them into open minutes (the same rules the booking screen uses).
 * Definitions (which states count) are in src/lib/reports.ts and DEVELOPERS.md "Reports".
 */
import type { Knex } from 'knex';
import { db } from './db';
import {
  REVENUE_STATES,
  share,
  type ClearanceRow,
  type FaultRow,
  type NoShowRow,
  type Period,
  type RevenueRow,
} from '@lib/reports';

export interface ReportScope {
  period: Period;
  timeZone: string;
  /** Only these machines; undefined = every machine. */
  machineIds?: string[];
}

export interface ReportMachine {
  id: string;
  name: string;
  retired: boolean;
}

/** The machines a report can be filtered by: every machine, retired ones last (their history still counts). */
export async function reportMachines(): Promise<ReportMachine[]> {
  const rows = await db()('machines').select('id', 'name', 'retired_at').orderByRaw('retired_at IS NOT NULL, name');
  return rows.map((r: { id: string; name: string; retired_at: Date | null }) => ({ id: r.id, name: r.name, retired: r.retired_at !== null }));
}

/** The machines in scope: the chosen ones (retired included), else those not retired. */
export async function scopeMachines(scope: ReportScope): Promise<{ id: string; name: string }[]> {
  const q = db()('machines').select('id', 'name').orderBy('name');
  if (scope.machineIds) q.whereIn('id', scope.machineIds);
  else q.whereNull('retired_at');
  return q;
}

export const int = (v: unknown): number => (v === null || v === undefined ? 0 : Math.round(Number(v)));

// ---------------------------------------------------------------------------------------------
// Revenue and recharge

export interface RevenueReport {
  rows: RevenueRow[];
  totals: { charges: number; grossMinor: number; refundedMinor: number; netMinor: number; taxMinor: number; cardNetMinor: number; rechargeNetMinor: number };
  currency: string | null;
}

/**
 * Charges in a revenue state (REVENUE_STATES) created in the period, by site month, machine, the
 * tier the charge was priced at and method (card or recharge). gross = amount_minor; net = amount − refunded.
 */
export async function revenueReport(scope: ReportScope): Promise<RevenueReport> {
  const params: Knex.RawBinding[] = [scope.timeZone, scope.period.start, scope.period.end];
  let machineClause = '';
  if (scope.machineIds) {
    machineClause = 'AND c.machine_id = ANY(?::uuid[])';
    params.push(scope.machineIds);
  }
  const result = await db().raw(
    `SELECT to_char(c.created_at AT TIME ZONE ?, 'YYYY-MM') AS month,
            c.machine_id, coalesce(m.name, '') AS machine, c.tier, c.method, c.currency,
            count(*)::int AS charges,
            sum(c.amount_minor)::bigint AS gross_minor,
            sum(c.refunded_minor)::bigint AS refunded_minor,
            sum(c.amount_minor - c.refunded_minor)::bigint AS net_minor,
            sum(c.tax_minor)::bigint AS tax_minor
     FROM charges c
     LEFT JOIN machines m ON m.id = c.machine_id
     WHERE c.state IN (${REVENUE_STATES.map((s) => `'${s}'`).join(', ')}) AND c.created_at >= ? AND c.created_at < ? ${machineClause}
     GROUP BY 1, 2, 3, 4, 5, 6
     ORDER BY 1, 3, 4, 5`,
    params,
  );
  const rows: RevenueRow[] = (result.rows as Record<string, unknown>[]).map((r) => ({
    month: String(r.month),
    machine_id: (r.machine_id as string | null) ?? '',
    machine: String(r.machine),
    tier: String(r.tier),
    method: r.method as 'card' | 'recharge',
    charges: int(r.charges),
    gross_minor: int(r.gross_minor),
    refunded_minor: int(r.refunded_minor),
    net_minor: int(r.net_minor),
    tax_minor: int(r.tax_minor),
    currency: String(r.currency),
  }));
  const totals = rows.reduce(
    (a, r) => ({
      charges: a.charges + r.charges,
      grossMinor: a.grossMinor + r.gross_minor,
      refundedMinor: a.refundedMinor + r.refunded_minor,
      netMinor: a.netMinor + r.net_minor,
      taxMinor: a.taxMinor + r.tax_minor,
      cardNetMinor: a.cardNetMinor + (r.method === 'card' ? r.net_minor : 0),
      rechargeNetMinor: a.rechargeNetMinor + (r.method === 'recharge' ? r.net_minor : 0),
    }),
    { charges: 0, grossMinor: 0, refundedMinor: 0, netMinor: 0, taxMinor: 0, cardNetMinor: 0, rechargeNetMinor: 0 },
  );
  const currencies = [...new Set(rows.map((r) => r.currency))];
  return { rows, totals, currency: currencies.length === 1 ? currencies[0]! : currencies.length ? 'mixed' : null };
}

// ---------------------------------------------------------------------------------------------
// Clearance funnel

export interface ClearanceReport {
  rows: ClearanceRow[];
  totals: { quizStarted: number; quizPassed: number; seatsBooked: number; attended: number; signedOff: number; lapsed: number };
}

/**
 * Per machine group, people who in the period: started a quiz, passed one, were signed off, and whose
 * clearance lapsed (its expiry fell in the period and has passed, and it was not renewed since).
 * Each person counts once per group and step.
 */
export async function clearanceReport(scope: ReportScope): Promise<ClearanceReport> {
  const { start, end } = scope.period;
  const params: Knex.RawBinding[] = [start, end, start, end, start, end, start, end, start, end, start, end];
  let groupClause = '';
  if (scope.machineIds) {
    groupClause = 'WHERE g.id IN (SELECT group_id FROM machines WHERE id = ANY(?::uuid[]) AND group_id IS NOT NULL)';
    params.push(scope.machineIds);
  }
  const result = await db().raw(
    `SELECT g.id AS group_id, g.name AS "group",
       (SELECT count(DISTINCT a.person_id) FROM quiz_attempts a
         WHERE a.group_id = g.id AND a.started_at >= ? AND a.started_at < ?)::int AS quiz_started,
       (SELECT count(DISTINCT a.person_id) FROM quiz_attempts a
         WHERE a.group_id = g.id AND a.passed AND a.submitted_at >= ? AND a.submitted_at < ?)::int AS quiz_passed,
       (SELECT count(DISTINCT x.person_id) FROM induction_seats x JOIN induction_sessions s ON s.id = x.session_id
         WHERE s.group_id = g.id AND x.state <> 'cancelled' AND s.starts_at >= ? AND s.starts_at < ?)::int AS seats_booked,
       (SELECT count(DISTINCT x.person_id) FROM induction_seats x JOIN induction_sessions s ON s.id = x.session_id
         WHERE s.group_id = g.id AND x.state = 'present' AND s.starts_at >= ? AND s.starts_at < ?)::int AS attended,
       (SELECT count(DISTINCT s.person_id) FROM signoffs s
         WHERE s.group_id = g.id AND s.signed_at >= ? AND s.signed_at < ?)::int AS signed_off,
       (SELECT count(*) FROM clearances c
         WHERE c.group_id = g.id AND c.state IN ('cleared', 'lapsed')
           AND c.expires_at >= ? AND c.expires_at < ? AND c.expires_at <= now())::int AS lapsed
     FROM machine_groups g ${groupClause}
     ORDER BY g.name`,
    params,
  );
  const rows: ClearanceRow[] = (result.rows as Record<string, unknown>[]).map((r) => ({
    group_id: String(r.group_id),
    group: String(r.group),
    quiz_started: int(r.quiz_started),
    quiz_passed: int(r.quiz_passed),
    seats_booked: int(r.seats_booked),
    attended: int(r.attended),
    signed_off: int(r.signed_off),
    lapsed: int(r.lapsed),
  }));
  const totals = rows.reduce(
    (a, r) => ({
      quizStarted: a.quizStarted + r.quiz_started, quizPassed: a.quizPassed + r.quiz_passed, seatsBooked: a.seatsBooked + r.seats_booked,
      attended: a.attended + r.attended, signedOff: a.signedOff + r.signed_off, lapsed: a.lapsed + r.lapsed,
    }),
    { quizStarted: 0, quizPassed: 0, seatsBooked: 0, attended: 0, signedOff: 0, lapsed: 0 },
  );
  return { rows, totals };
}

// ---------------------------------------------------------------------------------------------
// Faults and time out of service

export interface FaultReport {
  rows: FaultRow[];
  totals: { note: number; degraded: number; stop: number; openNow: number; outOfServiceMinutes: number; returnsToService: number; meanMinutesToReturn: number | null };
}

/**
 * Per machine: faults reported in the period by severity, faults still open now, minutes out of service
 * in the period (from machine_status_changes: each change to 'out of service' until the machine's next
 * change, or now), and the mean length of the out-of-service spells that ended in the period (mean time
 * to return to service).
 */
export async function faultReport(scope: ReportScope): Promise<FaultReport> {
  const { start, end } = scope.period;
  const machines = await scopeMachines(scope);
  if (!machines.length) return { rows: [], totals: { note: 0, degraded: 0, stop: 0, openNow: 0, outOfServiceMinutes: 0, returnsToService: 0, meanMinutesToReturn: null } };
  const ids = machines.map((m) => m.id);
  const result = await db().raw(
    `WITH spell AS (
       SELECT x.machine_id, x.changed_at AS began, x.ended
       FROM (
         SELECT sc.machine_id, sc.to_status, sc.changed_at,
                lead(sc.changed_at) OVER (PARTITION BY sc.machine_id ORDER BY sc.changed_at, sc.id) AS ended
         FROM machine_status_changes sc
         WHERE sc.machine_id = ANY(?::uuid[]) AND sc.changed_at < ?
       ) x
       WHERE x.to_status = 'out of service'
     ),
     downtime AS (
       SELECT machine_id,
         sum(extract(epoch FROM least(coalesce(ended, now()), ?::timestamptz) - greatest(began, ?::timestamptz)) / 60)
           FILTER (WHERE coalesce(ended, now()) > ? AND began < least(now(), ?::timestamptz)) AS minutes,
         count(*) FILTER (WHERE ended >= ? AND ended < ?) AS returns,
         avg(extract(epoch FROM ended - began) / 60) FILTER (WHERE ended >= ? AND ended < ?) AS mean_return
       FROM spell GROUP BY machine_id
     ),
     counts AS (
       SELECT machine_id,
         count(*) FILTER (WHERE severity = 'note' AND created_at >= ? AND created_at < ?) AS note,
         count(*) FILTER (WHERE severity = 'degraded' AND created_at >= ? AND created_at < ?) AS degraded,
         count(*) FILTER (WHERE severity = 'stop' AND created_at >= ? AND created_at < ?) AS stop,
         count(*) FILTER (WHERE status <> 'resolved') AS open_now
       FROM faults WHERE machine_id = ANY(?::uuid[]) AND (created_at < ? OR status <> 'resolved')
       GROUP BY machine_id
     )
     SELECT m.id AS machine_id, m.name AS machine,
       coalesce(c.note, 0)::int AS note, coalesce(c.degraded, 0)::int AS degraded, coalesce(c.stop, 0)::int AS stop,
       coalesce(c.open_now, 0)::int AS open_now,
       coalesce(d.minutes, 0)::float8 AS out_of_service_minutes,
       coalesce(d.returns, 0)::int AS returns_to_service,
       d.mean_return::float8 AS mean_minutes_to_return
     FROM machines m
     LEFT JOIN counts c ON c.machine_id = m.id
     LEFT JOIN downtime d ON d.machine_id = m.id
     WHERE m.id = ANY(?::uuid[])
     ORDER BY m.name`,
    [ids, end, end, start, start, end, start, end, start, end, start, end, start, end, start, end, ids, end, ids],
  );
  const rows: FaultRow[] = (result.rows as Record<string, unknown>[]).map((r) => ({
    machine_id: String(r.machine_id),
    machine: String(r.machine),
    note: int(r.note),
    degraded: int(r.degraded),
    stop: int(r.stop),
    open_now: int(r.open_now),
    out_of_service_minutes: int(r.out_of_service_minutes),
    returns_to_service: int(r.returns_to_service),
    mean_minutes_to_return: r.mean_minutes_to_return === null ? null : Math.round(Number(r.mean_minutes_to_return) * 10) / 10,
  }));
  const returns = rows.reduce((a, r) => a + r.returns_to_service, 0);
  const weighted = rows.reduce((a, r) => a + (r.mean_minutes_to_return ?? 0) * r.returns_to_service, 0);
  return {
    rows,
    totals: {
      note: rows.reduce((a, r) => a + r.note, 0),
      degraded: rows.reduce((a, r) => a + r.degraded, 0),
      stop: rows.reduce((a, r) => a + r.stop, 0),
      openNow: rows.reduce((a, r) => a + r.open_now, 0),
      outOfServiceMinutes: rows.reduce((a, r) => a + r.out_of_service_minutes, 0),
      returnsToService: returns,
      meanMinutesToReturn: returns ? Math.round((weighted / returns) * 10) / 10 : null,
    },
  };
}

// ---------------------------------------------------------------------------------------------
// No-shows and late cancellations

export interface NoShowReport {
  rows: NoShowRow[];
  totals: { bookings: number; noShows: number; lateCancellations: number };
}

/** Per person with a no-show or a late cancellation among their bookings starting in the period (class blocks and holds left out). */
export async function noShowReport(scope: ReportScope): Promise<NoShowReport> {
  const params: Knex.RawBinding[] = [scope.period.start, scope.period.end];
  let machineClause = '';
  if (scope.machineIds) {
    machineClause = 'AND b.machine_id = ANY(?::uuid[])';
    params.push(scope.machineIds);
  }
  const result = await db().raw(
    `SELECT p.id AS person_id, p.name AS person, p.email,
       count(*)::int AS bookings,
       count(*) FILTER (WHERE b.state = 'no-show')::int AS no_shows,
       count(*) FILTER (WHERE b.state = 'cancelled' AND b.late_cancel)::int AS late_cancellations
     FROM bookings b JOIN people p ON p.id = b.person_id
     WHERE b.kind = 'personal' AND b.starts_at >= ? AND b.starts_at < ? ${machineClause}
     GROUP BY p.id, p.name, p.email
     HAVING count(*) FILTER (WHERE b.state = 'no-show' OR (b.state = 'cancelled' AND b.late_cancel)) > 0
     ORDER BY count(*) FILTER (WHERE b.state = 'no-show' OR (b.state = 'cancelled' AND b.late_cancel)) DESC, p.name`,
    params,
  );
  const rows: NoShowRow[] = (result.rows as Record<string, unknown>[]).map((r) => ({
    person_id: String(r.person_id),
    person: String(r.person),
    email: String(r.email),
    bookings: int(r.bookings),
    no_shows: int(r.no_shows),
    late_cancellations: int(r.late_cancellations),
    no_show_share: share(int(r.no_shows), int(r.bookings)),
  }));
  return {
    rows,
    totals: {
      bookings: rows.reduce((a, r) => a + r.bookings, 0),
      noShows: rows.reduce((a, r) => a + r.no_shows, 0),
      lateCancellations: rows.reduce((a, r) => a + r.late_cancellations, 0),
    },
  };
}
