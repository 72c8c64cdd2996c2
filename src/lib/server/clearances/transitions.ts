/** Clearance transitions: quiz passed, signed off, suspended, reinstated — each in the caller's transaction, audited. */
import type { Knex } from 'knex';
import { transaction, type Conn } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { recordAudit } from '@lib/server/audit';
import { queueMail } from '@lib/server/mail';
import { env } from '@lib/server/env';
import { effectiveState, expiryFor, nextStep, transition, type ClearanceEvent, type ClearanceLevel, type ClearanceState, type RefresherRule } from '@lib/clearance-rules';
import { type ClearanceRow, formatLocalDate } from './state';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Transitions (each in the caller's transaction, audited)

async function lockClearance(trx: Knex.Transaction, personId: string, groupId: string): Promise<ClearanceRow> {
  await trx('clearances').insert({ person_id: personId, group_id: groupId, state: 'quiz due' }).onConflict(['person_id', 'group_id']).ignore();
  return (await trx('clearances').where({ person_id: personId, group_id: groupId }).forUpdate().first()) as ClearanceRow;
}

async function groupRow(trx: Conn, groupId: string) {
  const g = await trx('machine_groups').where({ id: groupId }).first();
  if (!g) throw new DomainError('not_found', 'not_found', 'No such machine group.');
  return g as { id: string; name: string; validity_days: number; refresher: RefresherRule; checklist: string[] };
}

async function personRow(trx: Conn, personId: string) {
  const p = await trx('people').where({ id: personId }).first('id', 'email', 'name', 'active');
  if (!p) throw new DomainError('not_found', 'not_found', 'No such person.');
  return p as { id: string; email: string; name: string; active: boolean };
}

export function apply(from: ClearanceState, event: ClearanceEvent, ctx: Parameters<typeof transition>[2]): ClearanceState {
  const r = transition(from, event, ctx);
  if (!r.ok) throw new DomainError('conflict', 'transition_refused', r.reason);
  return r.to;
}

export const link = (path: string) => new URL(path, env().PUBLIC_BASE_URL).toString();
const SAFETY_FOOTNOTE = 'Class 4 laser: never leave a running job, keep extraction and air assist on, never defeat an interlock. Your laser safety officer and the manufacturer’s manual take precedence.';

/** Called by the quiz module when an attempt passes: quiz due → awaiting sign-off; lapsed → cleared or awaiting sign-off. */
export async function recordQuizPass(trx: Knex.Transaction, personId: string, groupId: string, at: Date): Promise<{ state: ClearanceState; nextStep: string }> {
  const g = await groupRow(trx, groupId);
  const row = await lockClearance(trx, personId, groupId);
  const from = effectiveState(row.state, row.expires_at, at);
  const to = apply(from, { type: 'quiz_passed' }, { refresher: g.refresher });
  const zone = await getSettings(trx);
  const update: Record<string, unknown> = { state: to, quiz_passed_at: at, updated_at: at };
  if (to === 'cleared') {
    update.cleared_at = at;
    update.expires_at = expiryFor(at, g.validity_days, zone.timeZone);
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
      greeting: `Hello ${person.name},`,
      paragraphs: [`You passed the ${g.name} refresher quiz, so your clearance is current again until ${formatLocalDate(new Date((update.expires_at as Date).getTime() - 1), zone)}.`],
      action: { label: 'See your clearances', url: link('/clearances') },
      footnote: SAFETY_FOOTNOTE,
    });
  } else {
    await queueMail(trx, person.email, `Quiz passed — book your practical sign-off: ${g.name}`, {
      greeting: `Hello ${person.name},`,
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
    throw new DomainError('forbidden', 'self_signoff', 'You cannot sign off your own practical induction; another instructor must.');
  }
  {
    const g = await groupRow(trx, input.groupId);
    const person = await personRow(trx, input.personId);
    const missing = g.checklist.filter((item) => !input.checklist.some((c) => c.item === item && c.done));
    if (missing.length) {
      throw new DomainError('invalid', 'checklist_incomplete', `Every item of the practical checklist must be shown before sign-off. Not yet: ${missing.join('; ')}.`, { checklist: `Not ticked: ${missing.join('; ')}` });
    }
    const row = await lockClearance(trx, input.personId, input.groupId);
    const from = effectiveState(row.state, row.expires_at, at);
    const to = apply(from, { type: 'signed_off', level: input.level, heldLevel: row.cleared_at ? row.level : undefined }, { refresher: g.refresher });
    const zone = await getSettings(trx);
    const expiresAt = expiryFor(at, g.validity_days, zone.timeZone);
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
      greeting: `Hello ${person.name},`,
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
    if (!row) throw new DomainError('not_found', 'not_found', 'No such clearance.');
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
      greeting: `Hello ${person.name},`,
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
    if (!row) throw new DomainError('not_found', 'not_found', 'No such clearance.');
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
      greeting: `Hello ${person.name},`,
      paragraphs: [`An instructor reinstated your ${g.name} clearance (“${reason}”). Its state is now: ${to}.`, nextStep(to, { groupName: g.name, refresher: g.refresher })],
      action: { label: 'See your clearances', url: link('/clearances') },
    });
    return { id: row.id, state: to };
  });
}
