/**
 * Upkeep: the log per machine, per-machine intervals (admin), tube hours and the due list (forecast from
 * the last 30 days' beam time by the pure module src/lib/upkeep-forecast.ts). All SQL of this area.
 */
import { siteFormat } from '@lib/format';
import { db, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { queueMail } from './mail';
import { env } from './env';
import { activeWithRole } from './people';
import {
  byUrgency,
  defaultIntervals,
  forecast,
  tubeHours,
  UPKEEP_KINDS,
  UPKEEP_LABELS,
  type Forecast,
  type UpkeepInterval,
  type UpkeepKind,
} from '@lib/upkeep-forecast';
import { getSettings } from './settings';

export const RECENT_WINDOW_DAYS = 30;

export interface UpkeepEntry {
  id: string;
  machineId: string;
  machineName: string;
  kind: UpkeepKind;
  performedBy: string;
  performedByName: string;
  performedAt: Date;
  notes: string;
  tubeModel: string | null;
  tubeRatedHours: number | null;
}

type EntryRow = {
  id: string; machine_id: string; machine_name: string; kind: UpkeepKind; performed_by: string; performer_name: string;
  performed_at: Date; notes: string; tube_model: string | null; tube_rated_hours: number | null;
};

function toEntry(r: EntryRow): UpkeepEntry {
  return {
    id: r.id, machineId: r.machine_id, machineName: r.machine_name, kind: r.kind, performedBy: r.performed_by,
    performedByName: r.performer_name, performedAt: r.performed_at, notes: r.notes, tubeModel: r.tube_model, tubeRatedHours: r.tube_rated_hours,
  };
}

type MachineRow = { id: string; name: string; code: string; tube_type: 'dc_glass' | 'rf_metal'; coolant_type: 'water' | 'air'; created_at: Date };

async function machineRow(machineId: string, trx: Conn = db()): Promise<MachineRow> {
  const m = (await trx('machines').where({ id: machineId }).whereNull('retired_at').first('id', 'name', 'code', 'tube_type', 'coolant_type', 'created_at')) as MachineRow | undefined;
  if (!m) throw new DomainError('not_found', 'not_found', 'No such machine.');
  return m;
}

/** The upkeep log, newest first (one machine, or all). */
export async function listUpkeep(filter: { machineId?: string; limit?: number } = {}): Promise<UpkeepEntry[]> {
  const q = db()('upkeep_entries as u')
    .join('machines as m', 'm.id', 'u.machine_id')
    .join('people as p', 'p.id', 'u.performed_by')
    .orderBy('u.performed_at', 'desc')
    .limit(filter.limit ?? 100)
    .select('u.*', 'm.name as machine_name', 'p.name as performer_name');
  if (filter.machineId) q.where('u.machine_id', filter.machineId);
  return ((await q) as EntryRow[]).map(toEntry);
}

export interface UpkeepInput {
  kind: UpkeepKind;
  performedAt?: Date;
  notes: string;
  tubeModel?: string | null;
  tubeRatedHours?: number | null;
}

/** Logs upkeep done on a machine (steward, admin), audited in the same transaction. */
export async function logUpkeep(actorId: string, machineId: string, input: UpkeepInput, now = new Date()): Promise<UpkeepEntry> {
  const at = input.performedAt ?? now;
  if (at.getTime() > now.getTime() + 5 * 60_000) throw new DomainError('invalid', 'invalid', 'Log upkeep when it is done, not ahead of time.', { performedAt: 'Use a time that has passed.' });
  if (input.kind !== 'tube_replacement' && (input.tubeModel || input.tubeRatedHours)) {
    throw new DomainError('invalid', 'invalid', 'Tube type and rated life belong to a tube replacement.', { tubeModel: 'Only for a tube replacement.' });
  }
  if (input.kind === 'tube_replacement' && !input.tubeRatedHours) {
    throw new DomainError('invalid', 'invalid', 'Record the new tube\'s rated life (hours, from its data sheet).', { tubeRatedHours: 'Enter the rated life in hours.' });
  }
  return transaction(async (trx) => {
    const m = await machineRow(machineId, trx);
    const [row] = await trx('upkeep_entries')
      .insert({
        machine_id: m.id, kind: input.kind, performed_by: actorId, performed_at: at, notes: input.notes,
        tube_model: input.tubeModel ?? null, tube_rated_hours: input.tubeRatedHours ?? null,
      })
      .returning('id');
    await recordAudit(trx, {
      actorId,
      kind: 'upkeep.logged',
      subjectType: 'machine',
      subjectId: m.id,
      summary: `${UPKEEP_LABELS[input.kind]} logged on ${m.name}`,
      after: { entryId: row.id, kind: input.kind, performedAt: at.toISOString(), notes: input.notes, tubeModel: input.tubeModel ?? null, tubeRatedHours: input.tubeRatedHours ?? null },
    });
    const e = await trx('upkeep_entries as u')
      .join('machines as m', 'm.id', 'u.machine_id')
      .join('people as p', 'p.id', 'u.performed_by')
      .where('u.id', row.id)
      .first('u.*', 'm.name as machine_name', 'p.name as performer_name');
    return toEntry(e as EntryRow);
  });
}

/** A machine's intervals: the admin's where set, else the common-practice defaults. */
export async function intervalsFor(machineId: string, trx: Conn = db()): Promise<Record<UpkeepKind, UpkeepInterval & { custom: boolean }>> {
  const m = await machineRow(machineId, trx);
  const rows = (await trx('upkeep_intervals').where({ machine_id: machineId })) as IntervalRow[];
  return withDefaults(rows, m.tube_type, m.coolant_type);
}

type IntervalRow = { kind: UpkeepKind; beam_hours: number | string | null; days: number | null };

/** The intervals of several machines (the Upkeep screen's admin forms): two statements whatever their number. */
export async function intervalsForMachines(machineIds: readonly string[], trx: Conn = db()): Promise<Map<string, Record<UpkeepKind, UpkeepInterval & { custom: boolean }>>> {
  const out = new Map<string, Record<UpkeepKind, UpkeepInterval & { custom: boolean }>>();
  if (!machineIds.length) return out;
  const [machines, rows] = await Promise.all([
    trx('machines').whereIn('id', machineIds).select('id', 'tube_type', 'coolant_type') as Promise<Pick<MachineRow, 'id' | 'tube_type' | 'coolant_type'>[]>,
    trx('upkeep_intervals').whereIn('machine_id', machineIds).select('machine_id', 'kind', 'beam_hours', 'days') as Promise<(IntervalRow & { machine_id: string })[]>,
  ]);
  for (const m of machines) out.set(m.id, withDefaults(rows.filter((r) => r.machine_id === m.id), m.tube_type, m.coolant_type));
  return out;
}

/** A machine's intervals: its own rows where it has them (custom), else the defaults for its tube and coolant. */
function withDefaults(rows: readonly IntervalRow[], tubeType: MachineRow['tube_type'], coolantType: MachineRow['coolant_type']): Record<UpkeepKind, UpkeepInterval & { custom: boolean }> {
  const defaults = defaultIntervals(tubeType, coolantType);
  const out = {} as Record<UpkeepKind, UpkeepInterval & { custom: boolean }>;
  for (const k of UPKEEP_KINDS) {
    const r = rows.find((x) => x.kind === k);
    out[k] = r ? { beamHours: r.beam_hours === null ? null : Number(r.beam_hours), days: r.days, custom: true } : { ...defaults[k], custom: false };
  }
  return out;
}

/** Sets one interval of a machine (admin), audited. */
export async function setUpkeepInterval(actorId: string, machineId: string, kind: UpkeepKind, interval: UpkeepInterval): Promise<UpkeepInterval> {
  return transaction(async (trx) => {
    const m = await machineRow(machineId, trx);
    const before = (await intervalsFor(machineId, trx))[kind];
    await trx('upkeep_intervals')
      .insert({ machine_id: machineId, kind, beam_hours: interval.beamHours, days: interval.days, updated_by: actorId, updated_at: trx.fn.now() })
      .onConflict(['machine_id', 'kind'])
      .merge(['beam_hours', 'days', 'updated_by', 'updated_at']);
    await recordAudit(trx, {
      actorId,
      kind: 'upkeep.interval_changed',
      subjectType: 'machine',
      subjectId: m.id,
      summary: `${UPKEEP_LABELS[kind]} interval on ${m.name} changed`,
      before: { beamHours: before.beamHours, days: before.days },
      after: interval,
    });
    return interval;
  });
}

export interface DueItem {
  kind: UpkeepKind;
  label: string;
  interval: UpkeepInterval & { custom: boolean };
  lastDoneAt: Date | null;
  beamHoursSince: number;
  forecast: Forecast;
}

export interface UpkeepStatus {
  machineId: string;
  machineName: string;
  machineCode: string;
  tubeHours: number;
  /** How the tube hours were counted: sessions with a job-timer reading, and sessions counted check-in to check-out. */
  tubeHoursBasis: { timerSessions: number; clockSessions: number };
  tubeRatedHours: number;
  tubeFittedAt: Date | null;
  hoursPerDay: number;
  due: DueItem[];
}

type StatusRow = MachineRow & {
  intervals: IntervalRow[] | null;
  last: { kind: UpkeepKind; performed_at: string; tube_rated_hours: number | null; beam_minutes_since: number }[] | null;
  beam_minutes_ever: number;
  recent_minutes: number;
  tube_minutes: number;
  timer_sessions: number;
  clock_sessions: number;
};

/**
 * What the due lists of these machines (every machine in use when `machineId` is null) are worked out from, in one
 * statement, by name: the machine, its intervals, the last time each kind was done (up to `now`) with the beam
 * minutes since, the beam minutes ever and in the last RECENT_WINDOW_DAYS, and the tube's minutes since it was
 * fitted — the job-timer reading where the member gave one at check-out (the laser's own count), else the beam time
 * from check-in to check-out — with how many sessions each way. Only sessions checked out and checked in before
 * `now` count.
 */
async function statusRows(machineId: string | null, now: Date, trx: Conn): Promise<StatusRow[]> {
  const recentFrom = new Date(now.getTime() - RECENT_WINDOW_DAYS * 86_400_000);
  const { rows } = await trx.raw(
    `WITH m AS MATERIALIZED (SELECT id, name, code, tube_type, coolant_type, created_at FROM machines WHERE retired_at IS NULL ${machineId ? 'AND id = ?' : ''}),
          s AS MATERIALIZED (SELECT machine_id, checked_in_at, beam_minutes, job_timer_minutes FROM machine_sessions
                              WHERE machine_id IN (SELECT id FROM m) AND checked_out_at IS NOT NULL AND checked_in_at < ?),
          last AS (SELECT DISTINCT ON (u.machine_id, u.kind) u.machine_id, u.kind, u.performed_at, u.tube_rated_hours FROM upkeep_entries u
                    WHERE u.machine_id IN (SELECT id FROM m) AND u.performed_at <= ? ORDER BY u.machine_id, u.kind, u.performed_at DESC)
     SELECT m.*,
       (SELECT json_agg(json_build_object('kind', i.kind, 'beam_hours', i.beam_hours, 'days', i.days)) FROM upkeep_intervals i WHERE i.machine_id = m.id) AS intervals,
       (SELECT json_agg(json_build_object('kind', l.kind, 'performed_at', l.performed_at, 'tube_rated_hours', l.tube_rated_hours,
                 'beam_minutes_since', (SELECT coalesce(sum(s.beam_minutes), 0)::int FROM s WHERE s.machine_id = m.id AND s.checked_in_at >= l.performed_at)))
          FROM last l WHERE l.machine_id = m.id) AS last,
       (SELECT coalesce(sum(s.beam_minutes), 0)::int FROM s WHERE s.machine_id = m.id) AS beam_minutes_ever,
       (SELECT coalesce(sum(s.beam_minutes), 0)::int FROM s WHERE s.machine_id = m.id AND s.checked_in_at >= ?) AS recent_minutes,
       t.minutes AS tube_minutes, t.timer_sessions, t.clock_sessions
     FROM m
     CROSS JOIN LATERAL (
       SELECT coalesce(sum(coalesce(s.job_timer_minutes, s.beam_minutes)), 0)::int AS minutes, count(s.job_timer_minutes)::int AS timer_sessions,
              (count(*) - count(s.job_timer_minutes))::int AS clock_sessions
       FROM s WHERE s.machine_id = m.id
         AND s.checked_in_at >= coalesce((SELECT l.performed_at FROM last l WHERE l.machine_id = m.id AND l.kind = 'tube_replacement'), '-infinity')) t
     ORDER BY m.name`,
    [...(machineId ? [machineId] : []), now, now, recentFrom],
  );
  return rows as StatusRow[];
}

/** Tube hours, the rate of use and the due list of one machine, from its statusRows row. */
function statusOf(r: StatusRow, now: Date): UpkeepStatus {
  const intervals = withDefaults(r.intervals ?? [], r.tube_type, r.coolant_type);
  const last = (r.last ?? []).map((l) => ({ ...l, performed_at: new Date(l.performed_at) }));
  const recent = Number(r.recent_minutes);
  const tube = last.find((l) => l.kind === 'tube_replacement');
  const tubeMinutes = Number(r.tube_minutes);
  const rated = tube?.tube_rated_hours ?? intervals.tube_replacement.beamHours ?? defaultIntervals(r.tube_type, r.coolant_type).tube_replacement.beamHours!;
  const due: DueItem[] = [];
  for (const kind of UPKEEP_KINDS) {
    const done = last.find((l) => l.kind === kind);
    const since = kind === 'tube_replacement' ? tubeMinutes : Number(done ? done.beam_minutes_since : r.beam_minutes_ever);
    const interval = kind === 'tube_replacement' && tube?.tube_rated_hours ? { ...intervals[kind], beamHours: tube.tube_rated_hours } : intervals[kind];
    const f = forecast({ interval, lastDoneAt: done?.performed_at ?? null, since: r.created_at, beamMinutesSince: since, recentBeamMinutes: recent, windowDays: RECENT_WINDOW_DAYS, now });
    due.push({ kind, label: UPKEEP_LABELS[kind], interval, lastDoneAt: done?.performed_at ?? null, beamHoursSince: Math.round((since / 60) * 10) / 10, forecast: f });
  }
  return {
    machineId: r.id, machineName: r.name, machineCode: r.code, tubeHours: tubeHours(tubeMinutes),
    tubeHoursBasis: { timerSessions: Number(r.timer_sessions), clockSessions: Number(r.clock_sessions) }, tubeRatedHours: rated,
    tubeFittedAt: tube?.performed_at ?? null, hoursPerDay: Math.round((recent / 60 / RECENT_WINDOW_DAYS) * 100) / 100, due: byUrgency(due),
  };
}

/** Tube hours, the rate of use and the due list of one machine at `now`. */
export async function upkeepStatus(machineId: string, now = new Date(), trx: Conn = db()): Promise<UpkeepStatus> {
  const [row] = await statusRows(machineId, now, trx);
  if (!row) throw new DomainError('not_found', 'not_found', 'No such machine.');
  return statusOf(row, now);
}

/** Upkeep status of every machine in use (by name), in one statement whatever the number of machines. */
export async function upkeepOverview(now = new Date()): Promise<UpkeepStatus[]> {
  // a machine retired while the list is being built is in it or not, never a 500: one statement, one snapshot
  return (await statusRows(null, now, db())).map((r) => statusOf(r, now));
}

/** Overdue upkeep labels per machine id (for the Floor and the machine page). */
export async function overdueByMachine(now = new Date()): Promise<Map<string, string[]>> {
  const map = new Map<string, string[]>();
  for (const s of await upkeepOverview(now)) {
    const over = s.due.filter((d) => d.forecast.state === 'overdue').map((d) => d.label);
    if (over.length) map.set(s.machineId, over);
  }
  return map;
}

// ---------------------------------------------------------------------------------------------
// Reminders to the stewards

export interface UpkeepReminder {
  machineId: string;
  machineName: string;
  kind: UpkeepKind;
  label: string;
  state: 'due soon' | 'overdue';
  dueAt: Date | null;
}

const NEVER = new Date(0);

/**
 * The upkeep sweep (worker, hourly): every upkeep item that has become `due soon` or `overdue` since it was last
 * done is e-mailed to the active stewards once — one message listing what is new, with everything overdue
 * repeated beneath. A reminder is remembered per machine, kind, state and service cycle (upkeep_reminders), so
 * logging the work starts a new cycle and nothing is sent twice, whichever process runs the sweep.
 */
export async function remindUpkeep(opts: { now?: Date; machineIds?: string[] } = {}): Promise<{ reminders: UpkeepReminder[]; stewards: number }> {
  const now = opts.now ?? new Date();
  const statuses = (await upkeepOverview(now)).filter((s) => !opts.machineIds || opts.machineIds.includes(s.machineId));
  const candidates: (UpkeepReminder & { cycleFrom: Date })[] = [];
  for (const s of statuses) {
    for (const d of s.due) {
      if (d.forecast.state !== 'due soon' && d.forecast.state !== 'overdue') continue;
      candidates.push({ machineId: s.machineId, machineName: s.machineName, kind: d.kind, label: d.label, state: d.forecast.state, dueAt: d.forecast.dueAt, cycleFrom: d.lastDoneAt ?? NEVER });
    }
  }
  if (!candidates.length) return { reminders: [], stewards: 0 };
  return transaction(async (trx) => {
    const fresh: UpkeepReminder[] = [];
    for (const c of candidates) {
      const inserted = await trx('upkeep_reminders')
        .insert({ machine_id: c.machineId, kind: c.kind, state: c.state, cycle_from: c.cycleFrom, due_at: c.dueAt, sent_at: now })
        .onConflict(['machine_id', 'kind', 'state', 'cycle_from'])
        .ignore()
        .returning('id');
      if (inserted.length) fresh.push({ machineId: c.machineId, machineName: c.machineName, kind: c.kind, label: c.label, state: c.state, dueAt: c.dueAt });
    }
    if (!fresh.length) return { reminders: [], stewards: 0 };
    const site = await getSettings(trx);
    const f = siteFormat(site.locale, site.timeZone);
    const day = { format: (d: Date) => f.shortDate(d) };
    const line = (r: UpkeepReminder) => `${r.machineName}: ${r.label.toLowerCase()} — ${r.state === 'overdue' ? `overdue${r.dueAt ? ` since ${day.format(r.dueAt)}` : ''}` : `due${r.dueAt ? ` by ${day.format(r.dueAt)}` : ' soon'}`}`;
    const isFresh = (c: { machineId: string; kind: string; state: string }) => fresh.some((f) => f.machineId === c.machineId && f.kind === c.kind && f.state === c.state);
    const stillOverdue = candidates.filter((c) => c.state === 'overdue' && !isFresh(c));
    const stewards = await activeWithRole('steward', trx);
    const overdue = fresh.filter((r) => r.state === 'overdue').length;
    for (const st of stewards) {
      await queueMail(trx, st.email, `Upkeep: ${fresh.length} item${fresh.length === 1 ? '' : 's'} ${overdue ? 'overdue or due' : 'due soon'}`, {
        greeting: `Hello ${st.name},`,
        paragraphs: [
          `New on the upkeep list: ${fresh.map(line).join('; ')}.`,
          ...(stillOverdue.length ? [`Still overdue: ${stillOverdue.map(line).join('; ')}.`] : []),
          'Log the work on the Upkeep screen when it is done; the next reminder comes when the item falls due again.',
        ],
        action: { label: 'Open the Upkeep screen', url: `${env().PUBLIC_BASE_URL}/upkeep` },
        footnote: 'Work on the optics, the tube or the chiller with the machine switched off and isolated, as the manufacturer’s manual and your laser safety officer say.',
      });
    }
    return { reminders: fresh, stewards: stewards.length };
  });
}
