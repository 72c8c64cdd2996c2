/**
 * Demo clearances (invented): two machine groups, one published quiz each, and people in every
 * state — member, instructor and steward cleared on both groups; newbie with no clearance (quiz due);
 * student awaiting sign-off on the glass-tube lasers; lapsed@ with a lapsed clearance.
 */
import type { Knex } from 'knex';
import { hashPassword } from '../src/lib/server/passwords';
import { expiryFor } from '../src/lib/clearance-rules';
import type { QuizQuestion } from '../src/lib/quiz-rules';
import { clearanceRow, makeGroup, makePerson } from './lib/factories';

export const LAPSED_PERSON = { email: 'lapsed@tidewater.example', name: 'Tama Reid', roles: ['member'] } as const;

const GLASS_CHECKLIST = [
  'Shows the emergency stop and says when to use it',
  'Checks coolant flow and temperature before firing',
  'Starts the extractor and air assist before the job',
  'Sets focus with the gauge for the material thickness',
  'Frames the job and checks the material is on the allow-list',
  'Explains the fire routine: stop, lid closed, CO2 extinguisher, raise the alarm',
];

const RF_CHECKLIST = [
  'Shows the emergency stop and says when to use it',
  'Starts the extractor and air assist before the job',
  'Sets focus with the gauge for the material thickness',
  'Frames the job and checks the material is on the allow-list',
  'Explains the fire routine: stop, lid closed, CO2 extinguisher, raise the alarm',
];

/** Questions every CO2 laser quiz here shares (written for Beamwarden's demo). */
function common(prefix: string): QuizQuestion[] {
  const q = (n: number, rest: Omit<QuizQuestion, 'id'>): QuizQuestion => ({ id: `${prefix}-${n}`, ...rest });
  return [
    q(1, {
      topic: 'The invisible beam', kind: 'single',
      prompt: 'You cannot see a red glow anywhere while the laser fires. What does that tell you about the beam?',
      options: [
        { id: 'a', text: 'Nothing: the cutting beam is far-infrared (about 10.6 µm) and invisible, so it is dangerous whether or not you see it' },
        { id: 'b', text: 'The beam is off, so it is safe to open the lid' },
        { id: 'c', text: 'The red dot is the cutting beam, so no dot means no hazard' },
      ],
      correct: ['a'],
      explanation: 'The red dot is only a low-power pointer. The CO2 beam itself is invisible far-infrared light and can burn skin and eyes instantly.',
    }),
    q(2, {
      topic: 'Fire watch', kind: 'single',
      prompt: 'Your job will take 25 minutes. When may you step away from the machine?',
      options: [
        { id: 'a', text: 'Once the first pass looks clean' },
        { id: 'b', text: 'Never while it runs: pause or stop the job first, or ask a cleared person to take over the watch' },
        { id: 'c', text: 'For a minute or two if the extractor is running' },
      ],
      correct: ['b'],
      explanation: 'Flare-ups grow in seconds. Someone cleared must watch every second of a running job.',
    }),
    q(3, {
      topic: 'Fire routine', kind: 'multi',
      prompt: 'A flame keeps burning on the bed after the head has moved on. Which steps are right? (Choose all that apply.)',
      options: [
        { id: 'a', text: 'Stop the job (pause or emergency stop)' },
        { id: 'b', text: 'Keep the lid closed so the flame is starved of air' },
        { id: 'c', text: 'Open the lid and blow it out' },
        { id: 'd', text: 'If it does not die down at once, use the CO2 extinguisher and raise the alarm' },
      ],
      correct: ['a', 'b', 'd'],
      explanation: 'Opening the lid feeds the fire with air. Stop, keep it closed, and use the CO2 extinguisher if the flame persists.',
    }),
    q(4, {
      topic: 'Banned materials', kind: 'single',
      prompt: 'Someone offers you an offcut of PVC sheet. Why must it never go in the laser?',
      options: [
        { id: 'a', text: 'It melts into a messy edge' },
        { id: 'b', text: 'Burning it releases chlorine compounds (hydrogen chloride) that are toxic and corrode the machine' },
        { id: 'c', text: 'It reflects the beam back into the tube' },
      ],
      correct: ['b'],
      explanation: 'PVC, vinyl and other chlorine- or fluorine-bearing plastics give off corrosive, toxic gases. They are blocked on every machine.',
    }),
    q(5, {
      topic: 'Banned materials', kind: 'multi',
      prompt: 'Which of these are blocked here? (Choose all that apply.)',
      options: [
        { id: 'a', text: 'Vinyl sticker sheet' },
        { id: 'b', text: 'Polycarbonate' },
        { id: 'c', text: 'Cast acrylic' },
        { id: 'd', text: 'PTFE (the slippery white plastic)' },
      ],
      correct: ['a', 'b', 'd'],
      explanation: 'Vinyl and PTFE contain halogens; polycarbonate burns and smokes badly. Cast acrylic is allowed within the thickness limits.',
    }),
    q(6, {
      topic: 'Extraction', kind: 'single',
      prompt: 'When should the fume extractor be running?',
      options: [
        { id: 'a', text: 'Only when cutting, not when engraving' },
        { id: 'b', text: 'Before the job starts, all through it, and until the smoke has cleared after it ends' },
        { id: 'c', text: 'Only if you can smell smoke' },
      ],
      correct: ['b'],
      explanation: 'Fumes and fine particles are produced whenever material is burned away; smell is not a reliable warning.',
    }),
    q(7, {
      topic: 'Interlocks', kind: 'single',
      prompt: 'The lid interlock stops the beam whenever the lid opens. A friend suggests taping the switch down to watch more closely. What do you do?',
      options: [
        { id: 'a', text: 'Refuse: interlocks are never defeated outside authorised service, and report the suggestion to a steward' },
        { id: 'b', text: 'Allow it for a short engrave only' },
        { id: 'c', text: 'Allow it if you both wear sunglasses' },
      ],
      correct: ['a'],
      explanation: 'With the interlock defeated, an open lid exposes everyone in the room to an invisible Class 4 beam. Ordinary glasses give no protection.',
    }),
    q(8, {
      topic: 'Air assist', kind: 'single',
      prompt: 'What does the air assist do?',
      options: [
        { id: 'a', text: 'Cools the laser tube' },
        { id: 'b', text: 'Blows a stream of air at the cut to clear smoke and keep flames from taking hold, and protects the lens' },
        { id: 'c', text: 'Nothing important; it can stay off' },
      ],
      correct: ['b'],
    }),
  ];
}

const GLASS_EXTRA: QuizQuestion[] = [
  {
    id: 'g-9', topic: 'Cooling the tube', kind: 'single',
    prompt: 'Before firing a glass-tube laser you notice the coolant is not flowing. What now?',
    options: [
      { id: 'a', text: 'Fire a short test anyway' },
      { id: 'b', text: 'Do not fire: the glass tube can crack within moments without water; tell a steward' },
      { id: 'c', text: 'Lower the power to 20 % and carry on' },
    ],
    correct: ['b'],
    explanation: 'Glass DC tubes depend on flowing water; no flow means no firing.',
  },
  {
    id: 'g-10', topic: 'Focus', kind: 'single',
    prompt: 'Why do you set the focus height for each new material thickness?',
    options: [
      { id: 'a', text: 'So the beam is narrowest at the material: a clean cut with less heat spreading and less chance of flame' },
      { id: 'b', text: 'It only matters for engraving photographs' },
      { id: 'c', text: 'To make the red dot brighter' },
    ],
    correct: ['a'],
  },
  {
    id: 'g-11', topic: 'Before you start', kind: 'multi',
    prompt: 'Which checks belong before every job on Laser A or Laser C? (Choose all that apply.)',
    options: [
      { id: 'a', text: 'The bed is clear of offcuts and debris' },
      { id: 'b', text: 'The material is on the allow-list for this machine and thickness' },
      { id: 'c', text: 'You know where the emergency stop and the CO2 extinguisher are' },
      { id: 'd', text: 'The lid is propped open for a better view' },
    ],
    correct: ['a', 'b', 'c'],
  },
  {
    id: 'g-12', topic: 'Reflections', kind: 'single',
    prompt: 'Why are shiny metal sheets blocked on the glass-tube lasers?',
    options: [
      { id: 'a', text: 'They can reflect the beam back into the optics or out of the cutting area, and these machines cannot cut them' },
      { id: 'b', text: 'They scratch the honeycomb bed' },
      { id: 'c', text: 'They are allowed if you lower the speed' },
    ],
    correct: ['a'],
  },
];

const RF_EXTRA: QuizQuestion[] = [
  {
    id: 'r-9', topic: 'Focus', kind: 'single',
    prompt: 'Laser B has a small, sharp focus. What happens if the focus height is wrong?',
    options: [
      { id: 'a', text: 'The beam spreads at the material: poor cuts, more heat and a higher chance of flame' },
      { id: 'b', text: 'Nothing changes on an RF tube' },
      { id: 'c', text: 'The job runs faster' },
    ],
    correct: ['a'],
  },
  {
    id: 'r-10', topic: 'Engraving settings', kind: 'single',
    prompt: 'You want to engrave a photograph at high power and very slow speed to get it darker. What is the risk?',
    options: [
      { id: 'a', text: 'None' },
      { id: 'b', text: 'Heat builds up and the material can catch fire; start from the suggested settings and test on an offcut' },
      { id: 'c', text: 'The tube wears out instantly' },
    ],
    correct: ['b'],
  },
  {
    id: 'r-11', topic: 'Reporting faults', kind: 'multi',
    prompt: 'Which of these should you report as a fault before carrying on? (Choose all that apply.)',
    options: [
      { id: 'a', text: 'The extractor sounds weaker than usual' },
      { id: 'b', text: 'A lid interlock does not stop the job' },
      { id: 'c', text: 'You finished your job on time' },
      { id: 'd', text: 'A crack or smoke stain on the lens holder' },
    ],
    correct: ['a', 'b', 'd'],
    explanation: 'Anything that weakens extraction, interlocks or the optics is a fault; a failed interlock is a "stop" fault.',
  },
];

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
