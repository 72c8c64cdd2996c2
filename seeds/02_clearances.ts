/**
 * Demo clearances (invented): two machine groups, one published quiz each, and people in every
 * state — member, instructor and steward cleared on both groups; newbie with no clearance (quiz due);
 * student awaiting sign-off on the glass-tube lasers; lapsed@ with a lapsed clearance.
 */
import fs from 'node:fs';
import type { Knex } from 'knex';
import { z } from 'zod';
import { hashPassword } from '../src/lib/server/passwords';
import { expiryFor } from '../src/lib/clearance-rules';
import { quizQuestionSchema, type QuizQuestion } from '../src/lib/quiz-rules';
import { clearanceRow, makeGroup, makePerson } from './lib/factories';

export const LAPSED_PERSON = { email: 'lapsed@tidewater.example', name: 'Tama Reid', roles: ['member'] } as const;

const COOLANT_STEP = 'Checks coolant flow and temperature before firing';
const GLASS_CHECKLIST = [
  'Shows the emergency stop and says when to use it',
  COOLANT_STEP,
  'Starts the extractor and air assist before the job',
  'Sets focus with the gauge for the material thickness',
  'Frames the job and checks the material is on the allow-list',
  'Explains the fire routine: stop, lid closed, CO2 extinguisher, raise the alarm',
];

/** The RF laser is air-cooled: the same steps without the coolant check. */
const RF_CHECKLIST = GLASS_CHECKLIST.filter((step) => step !== COOLANT_STEP);

/**
 * The demo quiz banks (written for Beamwarden): the questions every CO2 laser quiz here shares (`common`, numbered
 * 1–8, given each group's prefix) and each group's own. They are content, so they live as data in
 * data/quiz-questions.json, checked on load with the quiz editor's own schema.
 */
const banks = z
  .object({ common: z.array(quizQuestionSchema), 'glass-tube': z.array(quizQuestionSchema), 'rf-laser': z.array(quizQuestionSchema) })
  .parse(JSON.parse(fs.readFileSync(new URL('./data/quiz-questions.json', import.meta.url), 'utf8')));
const common = (prefix: string): QuizQuestion[] => banks.common.map((q) => ({ ...q, id: `${prefix}-${q.id}` }));
const GLASS_EXTRA = banks['glass-tube'];
const RF_EXTRA = banks['rf-laser'];

async function publishQuiz(knex: Knex, groupId: string, title: string, questions: QuizQuestion[], authorId: string, at: Date): Promise<void> {
  const [quiz] = await knex('quizzes').insert({ group_id: groupId, title, created_by: authorId, created_at: at }).returning('id');
  await knex('quiz_versions').insert({
    quiz_id: quiz.id, version: 1, status: 'published', title, pass_mark_pct: 80, questions_per_attempt: 10,
    attempts_per_day: 3, cooldown_minutes: 10, questions: JSON.stringify(questions), edited_by: authorId,
    published_at: at, published_by: authorId, created_at: at, updated_at: at,
  });
}

export async function seed(knex: Knex): Promise<void> {
  const site = await knex('site_settings').where({ id: 1 }).first('time_zone');
  const zone = (site?.time_zone as string | undefined) ?? 'UTC';
  const now = new Date();
  const daysAgo = (n: number) => new Date(now.getTime() - n * 86_400_000);

  const glass = { id: await makeGroup(knex, { code: 'glass-tube', name: 'Glass-tube lasers', validityDays: 365, refresher: 'quiz', checklist: GLASS_CHECKLIST }) };
  const rf = { id: await makeGroup(knex, { code: 'rf-laser', name: 'RF laser', validityDays: 365, refresher: 'quiz_and_signoff', checklist: RF_CHECKLIST }) };
  await knex('machines').whereIn('code', ['laser-a', 'laser-c']).update({ group_id: glass.id });
  await knex('machines').where({ code: 'laser-b' }).update({ group_id: rf.id });

  const hash = await hashPassword('beamwarden-demo');
  const lapsedPerson = { id: await makePerson(knex, { email: LAPSED_PERSON.email, name: LAPSED_PERSON.name, passwordHash: hash, roles: LAPSED_PERSON.roles }) };

  const people = await knex('people').select('id', 'email');
  const id = (email: string) => {
    const p = people.find((x) => x.email === email);
    if (!p) throw new Error(`seed: ${email} is missing`);
    return p.id as string;
  };
  const instructor = id('instructor@tidewater.example');
  const admin = id('admin@tidewater.example');

  await publishQuiz(knex, glass.id, 'Glass-tube lasers: safe operation', [...common('g'), ...GLASS_EXTRA], instructor, daysAgo(120));
  await publishQuiz(knex, rf.id, 'RF laser: safe operation', [...common('r'), ...RF_EXTRA], instructor, daysAgo(120));

  const clearedAt = daysAgo(30);
  const cleared = (personId: string, groupId: string, signer: string) =>
    clearanceRow({ personId, groupId, state: 'cleared', quizPassedAt: daysAgo(32), clearedAt, expiresAt: expiryFor(clearedAt, 365, zone), signedOffBy: signer });
  const rows = [
    cleared(id('member@tidewater.example'), glass.id, instructor),
    cleared(id('member@tidewater.example'), rf.id, instructor),
    // instructors and stewards run the machines too; the instructor was signed off by the laser safety officer (admin)
    cleared(instructor, glass.id, admin),
    cleared(instructor, rf.id, admin),
    cleared(id('steward@tidewater.example'), glass.id, instructor),
    cleared(id('steward@tidewater.example'), rf.id, instructor),
    clearanceRow({ personId: id('student@tidewater.example'), groupId: glass.id, state: 'awaiting sign-off', quizPassedAt: daysAgo(2) }),
    clearanceRow({
      personId: lapsedPerson.id, groupId: glass.id, state: 'lapsed', quizPassedAt: daysAgo(400), clearedAt: daysAgo(398),
      expiresAt: expiryFor(daysAgo(398), 365, zone), signedOffBy: instructor,
    }),
  ];
  const inserted = await knex('clearances').insert(rows).returning(['id', 'person_id', 'group_id', 'signed_off_by', 'cleared_at']);
  const checklistFor = (g: string) => (g === glass.id ? GLASS_CHECKLIST : RF_CHECKLIST);
  await knex('signoffs').insert(
    inserted
      .filter((r) => r.signed_off_by)
      .map((r) => ({
        clearance_id: r.id, person_id: r.person_id, group_id: r.group_id, instructor_id: r.signed_off_by, level: 'basic',
        checklist: JSON.stringify(checklistFor(r.group_id)), notes: 'Demo record: practical induction completed.', signed_at: r.cleared_at,
      })),
  );
}
