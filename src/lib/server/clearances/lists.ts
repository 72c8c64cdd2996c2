/** What instructors see: the sign-off queue and the list of clearances. */
import { db } from '@lib/server/db';
import { effectiveState, type ClearanceLevel, type ClearanceState } from '@lib/clearance-rules';
import { formatLocalDate } from './state';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Instructor views

export interface QueueEntry {
  personId: string;
  personName: string;
  personEmail: string;
  groupId: string;
  groupName: string;
  quizPassedAt: string | null;
  checklist: string[];
}

/** People awaiting a practical sign-off, oldest quiz pass first. */
export async function signoffQueue(groupId?: string): Promise<QueueEntry[]> {
  const q = db()('clearances as c')
    .join('people as p', 'p.id', 'c.person_id')
    .join('machine_groups as g', 'g.id', 'c.group_id')
    .where('c.state', 'awaiting sign-off')
    .where('p.active', true);
  if (groupId) q.where('c.group_id', groupId);
  const rows = await q.orderBy('c.quiz_passed_at', 'asc').orderBy('p.name').select('c.person_id', 'p.name', 'p.email', 'c.group_id', 'g.name as group_name', 'c.quiz_passed_at', 'g.checklist');
  return rows.map((r) => ({
    personId: r.person_id, personName: r.name, personEmail: r.email, groupId: r.group_id, groupName: r.group_name,
    quizPassedAt: r.quiz_passed_at?.toISOString() ?? null, checklist: r.checklist,
  }));
}

export interface ClearanceListRow {
  id: string;
  personId: string;
  personName: string;
  personEmail: string;
  groupId: string;
  groupName: string;
  state: ClearanceState;
  level: ClearanceLevel;
  expiresAt: string | null;
  /** The last valid day in the site's zone (as the sign-off message says it). */
  expiresOn: string | null;
  suspendedReason: string | null;
}

export async function listClearances(filter: { q?: string; groupId?: string }, at = new Date()): Promise<ClearanceListRow[]> {
  const q = db()('clearances as c').join('people as p', 'p.id', 'c.person_id').join('machine_groups as g', 'g.id', 'c.group_id');
  if (filter.groupId) q.where('c.group_id', filter.groupId);
  if (filter.q) {
    const like = `%${filter.q.replace(/[\\%_]/g, (m) => `\\${m}`)}%`;
    q.where((w) => w.whereILike('p.name', like).orWhereILike('p.email', like));
  }
  const rows = await q.orderBy('p.name').orderBy('g.name').limit(200).select('c.*', 'p.name as person_name', 'p.email as person_email', 'g.name as group_name');
  const zone = await getSettings();
  return rows.map((r) => ({
    id: r.id, personId: r.person_id, personName: r.person_name, personEmail: r.person_email, groupId: r.group_id, groupName: r.group_name,
    state: effectiveState(r.state, r.expires_at, at), level: r.level, expiresAt: r.expires_at?.toISOString() ?? null,
    expiresOn: r.expires_at ? formatLocalDate(new Date(r.expires_at.getTime() - 1), zone) : null, suspendedReason: r.suspended_reason,
  }));
}
