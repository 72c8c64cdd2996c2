/** Machine groups (what a clearance is for) and the member's own clearances. */
import { db, transaction, type Conn } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { recordAudit } from '@lib/server/audit';
import { effectiveState, nextStep, type ClearanceLevel, type ClearanceState, type RefresherRule } from '@lib/clearance-rules';
import { type ClearanceRow, formatLocalDate, type MachineGroup } from './state';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Groups

export async function listGroups(q: Conn = db()): Promise<MachineGroup[]> {
  const groups = await q('machine_groups').orderBy('name');
  const machines = await q('machines').whereNull('retired_at').whereNotNull('group_id').orderBy('name').select('id', 'code', 'name', 'group_id', 'required_level');
  const published = await q('quizzes as z').join('quiz_versions as v', 'v.quiz_id', 'z.id').where('v.status', 'published').orderBy('v.published_at', 'desc').select('z.id', 'z.group_id');
  return groups.map((g) => ({
    id: g.id,
    code: g.code,
    name: g.name,
    validityDays: g.validity_days,
    refresher: g.refresher,
    checklist: g.checklist as string[],
    machines: machines.filter((m) => m.group_id === g.id).map((m) => ({ id: m.id, code: m.code, name: m.name, requiredLevel: m.required_level })),
    publishedQuizId: published.find((p) => p.group_id === g.id)?.id ?? null,
  }));
}

export async function getGroup(id: string, q: Conn = db()): Promise<MachineGroup | null> {
  return (await listGroups(q)).find((g) => g.id === id) ?? null;
}

/** Admin: validity period and refresher rule; instructors and admins: the practical checklist. */
export async function updateGroup(actorId: string, id: string, patch: { validityDays?: number; refresher?: RefresherRule; checklist?: string[] }): Promise<MachineGroup> {
  return transaction(async (trx) => {
    const before = await trx('machine_groups').where({ id }).forUpdate().first();
    if (!before) throw new DomainError('not_found', 'not_found', 'No such machine group.');
    const update: Record<string, unknown> = { updated_at: trx.fn.now() };
    if (patch.validityDays !== undefined) update.validity_days = patch.validityDays;
    if (patch.refresher !== undefined) update.refresher = patch.refresher;
    if (patch.checklist !== undefined) update.checklist = JSON.stringify(patch.checklist);
    await trx('machine_groups').where({ id }).update(update);
    await recordAudit(trx, {
      actorId, kind: 'machine_group.updated', subjectType: 'machine_group', subjectId: id,
      summary: `Changed the settings of ${before.name}`,
      before: { validityDays: before.validity_days, refresher: before.refresher, checklist: before.checklist },
      after: patch,
    });
    return (await getGroup(id, trx))!;
  });
}

// ---------------------------------------------------------------------------------------------
// The member's view

export interface MyClearance {
  id: string | null;
  groupId: string;
  groupName: string;
  machines: string[];
  state: ClearanceState;
  level: ClearanceLevel | null;
  expiresAt: string | null;
  expiresOn: string | null;
  clearedAt: string | null;
  suspendedReason: string | null;
  quizId: string | null;
  nextStep: string;
  canTakeQuiz: boolean;
}

export async function listMyClearances(personId: string, at: Date): Promise<MyClearance[]> {
  const q = db();
  const [groups, rows, zone] = await Promise.all([
    listGroups(q),
    q('clearances').where({ person_id: personId }) as Promise<ClearanceRow[]>,
    getSettings(q),
  ]);
  return groups.map((g) => {
    const r = rows.find((x) => x.group_id === g.id);
    const state = r ? effectiveState(r.state, r.expires_at, at) : 'quiz due';
    return {
      id: r?.id ?? null,
      groupId: g.id,
      groupName: g.name,
      machines: g.machines.map((m) => m.name),
      state,
      level: r && r.cleared_at ? r.level : null,
      expiresAt: r?.expires_at?.toISOString() ?? null,
      expiresOn: r?.expires_at ? formatLocalDate(new Date(r.expires_at.getTime() - 1), zone) : null,
      clearedAt: r?.cleared_at?.toISOString() ?? null,
      suspendedReason: state === 'suspended' ? r?.suspended_reason ?? null : null,
      quizId: g.publishedQuizId,
      nextStep: nextStep(state, { groupName: g.name, refresher: g.refresher, hasQuiz: Boolean(g.publishedQuizId) }),
      canTakeQuiz: Boolean(g.publishedQuizId) && (state === 'quiz due' || state === 'lapsed'),
    };
  });
}
