/**
 * Clearances: all SQL of machine groups, clearances and sign-offs. The rules themselves (states,
 * transitions, lapse, levels, next steps) are in the pure module src/lib/clearance-rules.ts.
 * canOperate() is the single gate bookings and check-ins call.
 */
import type { Knex } from 'knex';
import { db, transaction } from './db';
import { HttpError } from './errors';
import { recordAudit } from './audit';
import { queueMail } from './mail';
import { env } from './env';
import {
  decideOperate, effectiveState, expiryFor, needsLapseWarning, nextStep, transition,
  type ClearanceEvent, type ClearanceLevel, type ClearanceState, type RefresherRule,
} from '../clearance-rules';

export type { ClearanceState } from '../clearance-rules';

export type OperateVerdict = { ok: true } | { ok: false; state: ClearanceState | 'none'; message: string };

type Q = Knex | Knex.Transaction;

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

interface ClearanceRow {
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

async function siteZone(q: Q): Promise<string> {
  const row = await q('site_settings').where({ id: 1 }).first('time_zone');
  return (row?.time_zone as string | undefined) ?? 'UTC';
}

export function formatLocalDate(at: Date, timeZone: string): string {
  return new Intl.DateTimeFormat('en-NZ', { timeZone, day: 'numeric', month: 'long', year: 'numeric' }).format(at);
}

export function formatLocalDateTime(at: Date, timeZone: string): string {
  return new Intl.DateTimeFormat('en-NZ', { timeZone, day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZoneName: 'short' }).format(at);
}

// ---------------------------------------------------------------------------------------------
// The gate

/**
 * May `personId` run `machineId` at `at`? Reads the clearance of the machine's group and decides
 * with the pure rules: an expired clearance counts as lapsed at once, even before the timed job
 * writes it; a suspended, lapsed or missing clearance or too low a level refuses, with the next step.
 */
export async function canOperate(personId: string, machineId: string, at: Date, trx?: Knex | Knex.Transaction): Promise<OperateVerdict> {
  const q = trx ?? db();
  // one statement (it runs on every booking): the machine's group, the person's clearance on it, a published quiz
  const machine = await q('machines as m')
    .leftJoin('machine_groups as g', 'g.id', 'm.group_id')
    .leftJoin('clearances as c', (j) => j.on('c.group_id', 'm.group_id').andOn('c.person_id', q.raw('?', [personId])))
    .where('m.id', machineId)
    .first(
      'm.name as machine_name', 'm.required_level', 'm.group_id', 'g.name as group_name', 'g.refresher',
      'c.id as clearance_id', 'c.state', 'c.level', 'c.expires_at',
      q.raw("EXISTS (SELECT 1 FROM quizzes z JOIN quiz_versions v ON v.quiz_id = z.id WHERE z.group_id = m.group_id AND v.status = 'published') AS has_quiz"),
    );
  if (!machine) return { ok: false, state: 'none', message: 'This machine does not exist or has been retired.' };
  if (!machine.group_id) {
    return { ok: false, state: 'none', message: `${machine.machine_name} is not in a clearance group yet; an admin must assign one before anyone can run it.` };
  }
  return decideOperate(
    machine.clearance_id ? { state: machine.state, level: machine.level, expiresAt: machine.expires_at } : null,
    { requiredLevel: machine.required_level, groupName: machine.group_name, refresher: machine.refresher, hasQuiz: Boolean(machine.has_quiz) },
    at,
  );
}

/** A person's clearance on a group as it holds at `at` (for induction seats and the screens that explain the gate). */
export async function clearanceOf(personId: string, groupId: string, at: Date, q: Q = db()): Promise<{ state: ClearanceState; expiresAt: Date | null; expiresOn: string | null; suspendedReason: string | null }> {
  const r = (await q('clearances').where({ person_id: personId, group_id: groupId }).first()) as ClearanceRow | undefined;
  if (!r) return { state: 'quiz due', expiresAt: null, expiresOn: null, suspendedReason: null };
  const zone = await siteZone(q);
  const state = effectiveState(r.state, r.expires_at, at);
  return {
    state, expiresAt: r.expires_at,
    expiresOn: r.expires_at ? formatLocalDate(new Date(r.expires_at.getTime() - 1), zone) : null,
    suspendedReason: state === 'suspended' ? r.suspended_reason : null,
  };
}

// ---------------------------------------------------------------------------------------------
// Groups

export async function listGroups(q: Q = db()): Promise<MachineGroup[]> {
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

export async function getGroup(id: string, q: Q = db()): Promise<MachineGroup | null> {
  return (await listGroups(q)).find((g) => g.id === id) ?? null;
}

/** Admin: validity period and refresher rule; instructors and admins: the practical checklist. */
export async function updateGroup(actorId: string, id: string, patch: { validityDays?: number; refresher?: RefresherRule; checklist?: string[] }): Promise<MachineGroup> {
  return transaction(async (trx) => {
    const before = await trx('machine_groups').where({ id }).forUpdate().first();
    if (!before) throw new HttpError(404, 'not_found', 'No such machine group.');
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
    siteZone(q),
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

// ---------------------------------------------------------------------------------------------
// Transitions (each in the caller's transaction, audited)

async function lockClearance(trx: Knex.Transaction, personId: string, groupId: string): Promise<ClearanceRow> {
  await trx('clearances').insert({ person_id: personId, group_id: groupId, state: 'quiz due' }).onConflict(['person_id', 'group_id']).ignore();
  return (await trx('clearances').where({ person_id: personId, group_id: groupId }).forUpdate().first()) as ClearanceRow;
}

async function groupRow(trx: Q, groupId: string) {
  const g = await trx('machine_groups').where({ id: groupId }).first();
  if (!g) throw new HttpError(404, 'not_found', 'No such machine group.');
  return g as { id: string; name: string; validity_days: number; refresher: RefresherRule; checklist: string[] };
}

async function personRow(trx: Q, personId: string) {
  const p = await trx('people').where({ id: personId }).first('id', 'email', 'name', 'active');
  if (!p) throw new HttpError(404, 'not_found', 'No such person.');
  return p as { id: string; email: string; name: string; active: boolean };
}

function apply(from: ClearanceState, event: ClearanceEvent, ctx: Parameters<typeof transition>[2]): ClearanceState {
  const r = transition(from, event, ctx);
  if (!r.ok) throw new HttpError(409, 'transition_refused', r.reason);
  return r.to;
}

const link = (path: string) => new URL(path, env().PUBLIC_BASE_URL).toString();
const SAFETY_FOOTNOTE = 'Class 4 laser: never leave a running job, keep extraction and air assist on, never defeat an interlock. Your laser safety officer and the manufacturer’s manual take precedence.';

/** Called by the quiz module when an attempt passes: quiz due → awaiting sign-off; lapsed → cleared or awaiting sign-off. */
export async function recordQuizPass(trx: Knex.Transaction, personId: string, groupId: string, at: Date): Promise<{ state: ClearanceState; nextStep: string }> {
  const g = await groupRow(trx, groupId);
  const row = await lockClearance(trx, personId, groupId);
  const from = effectiveState(row.state, row.expires_at, at);
  const to = apply(from, { type: 'quiz_passed' }, { refresher: g.refresher });
  const zone = await siteZone(trx);
  const update: Record<string, unknown> = { state: to, quiz_passed_at: at, updated_at: at };
  if (to === 'cleared') {
    update.cleared_at = at;
    update.expires_at = expiryFor(at, g.validity_days, zone);
  }
  await trx('clearances').where({ id: row.id }).update(update);
  await recordAudit(trx, {
    actorId: personId, kind: 'clearance.quiz_passed', subjectType: 'clearance', subjectId: row.id,
    summary: `Passed the ${g.name} quiz (${from} → ${to})`, before: { state: from }, after: { state: to },
  });
  const person = await personRow(trx, personId);
  const step = nextStep(to, { groupName: g.name, refresher: g.refresher });
  if (to === 'cleared') {
    await queueMail(trx, person.email, `You are cleared again: ${g.name}`, {
      greeting: `Kia ora ${person.name},`,
      paragraphs: [`You passed the ${g.name} refresher quiz, so your clearance is current again until ${formatLocalDate(new Date((update.expires_at as Date).getTime() - 1), zone)}.`],
      action: { label: 'See your clearances', url: link('/clearances') },
      footnote: SAFETY_FOOTNOTE,
    });
  } else {
    await queueMail(trx, person.email, `Quiz passed — book your practical sign-off: ${g.name}`, {
      greeting: `Kia ora ${person.name},`,
      paragraphs: [
        `You passed the ${g.name} quiz. The next step is a practical sign-off: an instructor watches you run the machine — emergency stop, extraction and air assist, focus, framing the job and the fire routine.`,
        'Book a seat at an induction session from your Clearances screen (the next sessions are listed there); bring a small test piece of an allowed material.',
      ],
      action: { label: 'See your clearances', url: link('/clearances') },
      footnote: SAFETY_FOOTNOTE,
    });
  }
  return { state: to, nextStep: step };
}

export interface SignOffInput {
  personId: string;
  groupId: string;
  checklist: { item: string; done: boolean }[];
  notes: string;
  level: ClearanceLevel;
}

/** An instructor signs off a person's practical induction: awaiting sign-off → cleared (never themselves). */
export async function signOff(instructorId: string, input: SignOffInput, at = new Date()) {
  return transaction((trx) => signOffIn(trx, instructorId, input, at));
}

/** The same sign-off on the caller's transaction (the induction roster marks attendance and signs off in one). */
export async function signOffIn(trx: Knex.Transaction, instructorId: string, input: SignOffInput, at = new Date()) {
  if (instructorId === input.personId) {
    throw new HttpError(403, 'self_signoff', 'You cannot sign off your own practical induction; another instructor must.');
  }
  {
    const g = await groupRow(trx, input.groupId);
    const person = await personRow(trx, input.personId);
    const missing = g.checklist.filter((item) => !input.checklist.some((c) => c.item === item && c.done));
    if (missing.length) {
      throw new HttpError(422, 'checklist_incomplete', `Every item of the practical checklist must be shown before sign-off. Not yet: ${missing.join('; ')}.`, { checklist: `Not ticked: ${missing.join('; ')}` });
    }
    const row = await lockClearance(trx, input.personId, input.groupId);
    const from = effectiveState(row.state, row.expires_at, at);
    const to = apply(from, { type: 'signed_off', level: input.level, heldLevel: row.cleared_at ? row.level : undefined }, { refresher: g.refresher });
    const zone = await siteZone(trx);
    const expiresAt = expiryFor(at, g.validity_days, zone);
    await trx('clearances').where({ id: row.id }).update({
      state: to, level: input.level, cleared_at: at, expires_at: expiresAt, signed_off_by: instructorId, lapse_warned_for: null, updated_at: at,
    });
    const [signoff] = await trx('signoffs')
      .insert({
        clearance_id: row.id, person_id: input.personId, group_id: input.groupId, instructor_id: instructorId, level: input.level,
        checklist: JSON.stringify(input.checklist.filter((c) => c.done).map((c) => c.item)), notes: input.notes, signed_at: at,
      })
      .returning(['id', 'signed_at']);
    await recordAudit(trx, {
      actorId: instructorId, kind: 'clearance.signed_off', subjectType: 'clearance', subjectId: row.id,
      summary: `Signed off ${person.name} on ${g.name} (${input.level})`,
      before: { state: from, level: row.level }, after: { state: to, level: input.level, expiresAt: expiresAt.toISOString(), checklist: input.checklist, notes: input.notes },
    });
    await queueMail(trx, person.email, `You are cleared: ${g.name}`, {
      greeting: `Kia ora ${person.name},`,
      paragraphs: [
        `An instructor signed off your practical induction: you are cleared (${input.level}) on ${g.name} until ${formatLocalDate(new Date(expiresAt.getTime() - 1), zone)}.`,
        'You can now book the machine. Stay with every job while it runs and keep the extractor and air assist on.',
      ],
      action: { label: 'See your clearances', url: link('/clearances') },
      footnote: SAFETY_FOOTNOTE,
    });
    return {
      signoffId: signoff.id as string, clearanceId: row.id, state: to, level: input.level, expiresAt: expiresAt.toISOString(),
      // the last valid day in the site's zone: the same date the clearance tables show
      expiresOn: formatLocalDate(new Date(expiresAt.getTime() - 1), zone),
    };
  }
}

export async function suspend(instructorId: string, clearanceId: string, reason: string, at = new Date()) {
  return transaction(async (trx) => {
    const row = (await trx('clearances').where({ id: clearanceId }).forUpdate().first()) as ClearanceRow | undefined;
    if (!row) throw new HttpError(404, 'not_found', 'No such clearance.');
    const g = await groupRow(trx, row.group_id);
    const from = effectiveState(row.state, row.expires_at, at);
    apply(from, { type: 'suspended' }, { refresher: g.refresher });
    await trx('clearances').where({ id: row.id }).update({
      state: 'suspended', suspended_from: from, suspended_reason: reason, suspended_at: at, suspended_by: instructorId, updated_at: at,
    });
    const person = await personRow(trx, row.person_id);
    await recordAudit(trx, {
      actorId: instructorId, kind: 'clearance.suspended', subjectType: 'clearance', subjectId: row.id,
      summary: `Suspended ${person.name}'s ${g.name} clearance: ${reason}`, before: { state: from }, after: { state: 'suspended', reason },
    });
    await queueMail(trx, person.email, `Your clearance is suspended: ${g.name}`, {
      greeting: `Kia ora ${person.name},`,
      paragraphs: [
        `An instructor suspended your ${g.name} clearance. The reason given: “${reason}”.`,
        'Until it is reinstated you cannot book or run these machines. Ask an instructor or the laser safety officer what is needed.',
      ],
      action: { label: 'See your clearances', url: link('/clearances') },
    });
    return { id: row.id, state: 'suspended' as const };
  });
}

export async function reinstate(instructorId: string, clearanceId: string, reason: string, at = new Date()) {
  return transaction(async (trx) => {
    const row = (await trx('clearances').where({ id: clearanceId }).forUpdate().first()) as ClearanceRow | undefined;
    if (!row) throw new HttpError(404, 'not_found', 'No such clearance.');
    const g = await groupRow(trx, row.group_id);
    const to = apply(row.state, { type: 'reinstated' }, {
      refresher: g.refresher, suspendedFrom: row.suspended_from, expired: Boolean(row.expires_at && row.expires_at.getTime() <= at.getTime()),
    });
    await trx('clearances').where({ id: row.id }).update({
      state: to, suspended_from: null, suspended_reason: null, suspended_at: null, suspended_by: null, updated_at: at,
    });
    const person = await personRow(trx, row.person_id);
    await recordAudit(trx, {
      actorId: instructorId, kind: 'clearance.reinstated', subjectType: 'clearance', subjectId: row.id,
      summary: `Reinstated ${person.name}'s ${g.name} clearance: ${reason}`, before: { state: 'suspended', reason: row.suspended_reason }, after: { state: to, reason },
    });
    await queueMail(trx, person.email, `Your clearance is reinstated: ${g.name}`, {
      greeting: `Kia ora ${person.name},`,
      paragraphs: [`An instructor reinstated your ${g.name} clearance (“${reason}”). Its state is now: ${to}.`, nextStep(to, { groupName: g.name, refresher: g.refresher })],
      action: { label: 'See your clearances', url: link('/clearances') },
    });
    return { id: row.id, state: to };
  });
}

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
  const zone = await siteZone(db());
  return rows.map((r) => ({
    id: r.id, personId: r.person_id, personName: r.person_name, personEmail: r.person_email, groupId: r.group_id, groupName: r.group_name,
    state: effectiveState(r.state, r.expires_at, at), level: r.level, expiresAt: r.expires_at?.toISOString() ?? null,
    expiresOn: r.expires_at ? formatLocalDate(new Date(r.expires_at.getTime() - 1), zone) : null, suspendedReason: r.suspended_reason,
  }));
}

// ---------------------------------------------------------------------------------------------
// Timed work (run by the worker on a schedule)

/**
 * Writes lapses whose expiry has come (cleared → lapsed, audited, with an e-mail) and sends the
 * "lapsing in 14 days" warning once per expiry. `onlyPersonId` narrows the sweep to one person.
 */
export async function sweepClearances(at = new Date(), onlyPersonId?: string): Promise<{ lapsed: number; warned: number }> {
  return transaction(async (trx) => {
    const zone = await siteZone(trx);
    const due = trx('clearances as c').join('machine_groups as g', 'g.id', 'c.group_id').join('people as p', 'p.id', 'c.person_id')
      .where('c.state', 'cleared').where('c.expires_at', '<=', at.toISOString());
    if (onlyPersonId) due.where('c.person_id', onlyPersonId);
    const lapsing = await due.forUpdate('c').select('c.id', 'c.expires_at', 'g.name as group_name', 'g.refresher', 'p.email', 'p.name');
    for (const r of lapsing) {
      const to = apply('cleared', { type: 'expired' }, { refresher: r.refresher });
      await trx('clearances').where({ id: r.id }).update({ state: to, updated_at: at });
      await recordAudit(trx, {
        actorId: null, kind: 'clearance.lapsed', subjectType: 'clearance', subjectId: r.id,
        summary: `${r.name}'s ${r.group_name} clearance lapsed at ${formatLocalDateTime(r.expires_at, zone)}`, before: { state: 'cleared' }, after: { state: to },
      });
      await queueMail(trx, r.email, `Your clearance has lapsed: ${r.group_name}`, {
        greeting: `Kia ora ${r.name},`,
        paragraphs: [`Your ${r.group_name} clearance lapsed at ${formatLocalDateTime(r.expires_at, zone)}.`, nextStep('lapsed', { groupName: r.group_name, refresher: r.refresher })],
        action: { label: 'See your clearances', url: link('/clearances') },
      });
    }
    const soon = trx('clearances as c').join('machine_groups as g', 'g.id', 'c.group_id').join('people as p', 'p.id', 'c.person_id')
      .where('c.state', 'cleared').where('c.expires_at', '>', at.toISOString()).where('c.expires_at', '<=', new Date(at.getTime() + 14 * 86_400_000).toISOString());
    if (onlyPersonId) soon.where('c.person_id', onlyPersonId);
    const candidates = await soon.forUpdate('c').select('c.id', 'c.state', 'c.expires_at', 'c.lapse_warned_for', 'g.name as group_name', 'g.refresher', 'p.email', 'p.name');
    let warned = 0;
    for (const r of candidates) {
      if (!needsLapseWarning(r.state, r.expires_at, r.lapse_warned_for, at)) continue;
      await trx('clearances').where({ id: r.id }).update({ lapse_warned_for: r.expires_at });
      const days = Math.ceil((r.expires_at.getTime() - at.getTime()) / 86_400_000);
      await queueMail(trx, r.email, `Your clearance lapses in ${days} day${days === 1 ? '' : 's'}: ${r.group_name}`, {
        greeting: `Kia ora ${r.name},`,
        paragraphs: [
          `Your ${r.group_name} clearance is valid until the end of ${formatLocalDate(new Date(r.expires_at.getTime() - 1), zone)}.`,
          r.refresher === 'quiz'
            ? 'To keep it, pass the refresher quiz on the Clearances screen once it lapses — it takes a few minutes.'
            : 'Once it lapses you will need the refresher quiz and a new practical sign-off; book time with an instructor early.',
        ],
        action: { label: 'See your clearances', url: link('/clearances') },
      });
      warned++;
    }
    return { lapsed: lapsing.length, warned };
  });
}
