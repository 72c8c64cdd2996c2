/**
 * A machine group of the test file's own, with a published quiz (a copy of a demo group's), for browser journeys
 * whose subject is the clearance path: publishing a quiz version, listing a group's next induction sessions, signing
 * off. Every file that lists all groups sees it while the file runs; the clearance tests read the seeded groups only
 * (the demo member "is cleared on both groups"), so the file removes the group and everything hanging from it in
 * `afterAll` (`removeTestGroup`). Its name sorts after the demo groups' names: `createTestMachine` puts other files'
 * machines in the first group by name, never in this one.
 */
import { makeGroup } from '../../seeds/lib/factories';
import { testDb } from './db';

export interface TestGroup {
  id: string;
  code: string;
  name: string;
  quizId: string;
  quizTitle: string;
}

/** A group like the demo group `like` (checklist, validity, refresher rule) with version 1 of a copy of its published quiz. */
export async function createTestGroup(label: string, like: 'glass-tube' | 'rf-laser'): Promise<TestGroup> {
  const k = testDb();
  const stamp = `${Date.now().toString(36)}${process.pid.toString(36)}`;
  const source = await k('machine_groups').where({ code: like }).first('checklist', 'validity_days', 'refresher');
  const code = `t-${label.slice(0, 29 - stamp.length)}-${stamp}`;
  const name = `Test group ${label} ${stamp}`;
  const id = await makeGroup(k, { code, name, validityDays: source.validity_days, refresher: source.refresher, checklist: source.checklist });
  const v = await k('quiz_versions as v').join('quizzes as z', 'z.id', 'v.quiz_id').join('machine_groups as g', 'g.id', 'z.group_id')
    .where({ 'g.code': like, 'v.status': 'published' })
    .first('v.pass_mark_pct', 'v.questions_per_attempt', 'v.attempts_per_day', 'v.cooldown_minutes', 'v.time_limit_minutes', 'v.questions');
  const quizTitle = `${name}: safe operation`;
  const [quiz] = (await k('quizzes').insert({ group_id: id, title: quizTitle }).returning('id')) as { id: string }[];
  await k('quiz_versions').insert({
    quiz_id: quiz!.id, version: 1, status: 'published', title: quizTitle, pass_mark_pct: v.pass_mark_pct, questions_per_attempt: v.questions_per_attempt,
    attempts_per_day: v.attempts_per_day, cooldown_minutes: v.cooldown_minutes, time_limit_minutes: v.time_limit_minutes,
    questions: JSON.stringify(v.questions), published_at: new Date(),
  });
  return { id, code, name, quizId: quiz!.id, quizTitle };
}

/**
 * Removes the group with its quiz, attempts, clearances, sign-offs and induction sessions, in one transaction; its
 * machines (retire them first: `retireTestMachine`) keep their rows, without a group.
 */
export async function removeTestGroup(group: TestGroup | undefined): Promise<void> {
  if (!group) return;
  await testDb().transaction(async (trx) => {
    const sessions = trx('induction_sessions').where({ group_id: group.id }).select('id');
    await trx('induction_waitlist').whereIn('session_id', sessions.clone()).delete();
    await trx('induction_seats').whereIn('session_id', sessions.clone()).delete();
    await trx('induction_sessions').where({ group_id: group.id }).delete();
    await trx('quiz_attempts').where({ group_id: group.id }).delete();
    await trx('signoffs').where({ group_id: group.id }).delete();
    await trx('clearances').where({ group_id: group.id }).delete();
    await trx('quiz_versions').whereIn('quiz_id', trx('quizzes').where({ group_id: group.id }).select('id')).delete();
    await trx('quizzes').where({ group_id: group.id }).delete();
    await trx('machines').where({ group_id: group.id }).update({ group_id: null });
    await trx('machine_groups').where({ id: group.id }).delete();
  });
}
