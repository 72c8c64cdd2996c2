/**
 * Clearances: the state of a person's clearance for a machine group, and canOperate(), the single gate bookings and
 * check-ins call. The rules themselves (states, transitions, lapse, levels, next steps) are in the pure module
 * src/lib/clearance-rules.ts. Beside it: groups.ts, transitions.ts, lists.ts, sweep.ts.
 */
import { db, type Conn } from '@lib/server/db';
import { decideOperate, effectiveState, type ClearanceLevel, type ClearanceState, type RefresherRule } from '@lib/clearance-rules';
import { getSettings } from '@lib/server/settings';
import { siteFormat } from '@lib/format';
export type { ClearanceState } from '@lib/clearance-rules';

export type OperateVerdict = { ok: true } | { ok: false; state: ClearanceState | 'none'; message: string };

export interface MachineGroup {
  id: string;
  code: string;
  name: string;
  validityDays: number;
  refresher: RefresherRule;
  checklist: string[];
  machines: { id: string; code: string; name: string; requiredLevel: ClearanceLevel }[];
  publishedQuizId: string | null;
}

export interface ClearanceRow {
  id: string;
  person_id: string;
  group_id: string;
  state: ClearanceState;
  level: ClearanceLevel;
  quiz_passed_at: Date | null;
  cleared_at: Date | null;
  expires_at: Date | null;
  signed_off_by: string | null;
  suspended_from: Exclude<ClearanceState, 'suspended'> | null;
  suspended_reason: string | null;
  suspended_at: Date | null;
  lapse_warned_for: Date | null;
  updated_at: Date;
}

/** The site's zone and locale: dates in this area's e-mails and screens are written with them. */
export interface SiteZone {
  timeZone: string;
  locale: string;
}

export function formatLocalDate(at: Date, site: SiteZone): string {
  return siteFormat(site.locale, site.timeZone).date(at);
}

export function formatLocalDateTime(at: Date, site: SiteZone): string {
  return siteFormat(site.locale, site.timeZone).dateTimeZone(at);
}

// ---------------------------------------------------------------------------------------------
// The gate

/**
 * May `personId` run `machineId` at `at`? Reads the clearance of the machine's group and decides
 * with the pure rules: an expired clearance counts as lapsed at once, even before the timed job
 * writes it; a suspended, lapsed or missing clearance or too low a level refuses, with the next step.
 */
export async function canOperate(personId: string, machineId: string, at: Date, trx?: Conn): Promise<OperateVerdict> {
  const q = trx ?? db();
  // one statement (it runs on every check-in and badge): the machine's group, the person's clearance on it, a published quiz
  const { rows } = await q.raw(`SELECT ${operateFactsSql('?::uuid')} AS operate`, [personId, machineId]);
  return operateVerdict((rows[0] as { operate: OperateFacts | null } | undefined)?.operate ?? null, at);
}

/** What canOperate decides from, as operateFactsSql reads it (json: the expiry comes as ISO text). */
export interface OperateFacts {
  machine_name: string;
  required_level: ClearanceLevel;
  group_id: string | null;
  group_name: string | null;
  refresher: RefresherRule | null;
  clearance_id: string | null;
  state: ClearanceState | null;
  level: ClearanceLevel | null;
  expires_at: string | null;
  has_quiz: boolean;
}

/**
 * canOperate's facts as one select expression (a json object, null when no machine has the id): for a statement the
 * caller runs anyway, e.g. the booking gate's lock (bookings/gate.ts). `machineIdSql` and `personIdSql` are SQL
 * expressions for the machine's and the person's id; with the default `personIdSql`, the expression's first binding
 * (before any of `machineIdSql`'s) is the person's id. Decide with operateVerdict.
 */
export function operateFactsSql(machineIdSql: string, personIdSql = '?'): string {
  return `(SELECT json_build_object('machine_name', om.name, 'required_level', om.required_level, 'group_id', om.group_id,
            'group_name', og.name, 'refresher', og.refresher, 'clearance_id', oc.id, 'state', oc.state, 'level', oc.level, 'expires_at', oc.expires_at,
            'has_quiz', EXISTS (SELECT 1 FROM quizzes z JOIN quiz_versions v ON v.quiz_id = z.id WHERE z.group_id = om.group_id AND v.status = 'published'))
          FROM machines om LEFT JOIN machine_groups og ON og.id = om.group_id
          LEFT JOIN clearances oc ON oc.group_id = om.group_id AND oc.person_id = ${personIdSql}
          WHERE om.id = ${machineIdSql})`;
}

/** canOperate's verdict from operateFactsSql's facts at `at`. */
export function operateVerdict(machine: OperateFacts | null, at: Date): OperateVerdict {
  if (!machine) return { ok: false, state: 'none', message: 'This machine does not exist or has been retired.' };
  if (!machine.group_id) {
    return { ok: false, state: 'none', message: `${machine.machine_name} is not in a clearance group yet; an admin must assign one before anyone can run it.` };
  }
  return decideOperate(
    machine.clearance_id ? { state: machine.state!, level: machine.level!, expiresAt: machine.expires_at === null ? null : new Date(machine.expires_at) } : null,
    { requiredLevel: machine.required_level, groupName: machine.group_name!, refresher: machine.refresher!, hasQuiz: Boolean(machine.has_quiz) },
    at,
  );
}

/** A person's clearance on a group as it holds at `at` (for induction seats and the screens that explain the gate). */
export async function clearanceOf(personId: string, groupId: string, at: Date, q: Conn = db()): Promise<{ state: ClearanceState; expiresAt: Date | null; expiresOn: string | null; suspendedReason: string | null }> {
  const r = (await q('clearances').where({ person_id: personId, group_id: groupId }).first()) as ClearanceRow | undefined;
  if (!r) return { state: 'quiz due', expiresAt: null, expiresOn: null, suspendedReason: null };
  const zone = await getSettings(q);
  const state = effectiveState(r.state, r.expires_at, at);
  return {
    state, expiresAt: r.expires_at,
    expiresOn: r.expires_at ? formatLocalDate(new Date(r.expires_at.getTime() - 1), zone) : null,
    suspendedReason: state === 'suspended' ? r.suspended_reason : null,
  };
}
