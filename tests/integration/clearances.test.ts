/**
 * Clearances against the running app and the real PostgreSQL: the seeded states, quizzes scored on the
 * server (the answer key never reaches the client), attempt limits, sign-offs (never one's own),
 * suspension blocking canOperate, and expiry turning a clearance lapsed at the right instant in the
 * site's time zone.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { DEMO } from '../support/env';
import { signUpNew } from '../support/people';
import { canOperate } from '../../src/lib/server/clearances/state';
import { sweepClearances } from '../../src/lib/server/clearances/sweep';
import { startAttempt } from '../../src/lib/server/quizzes';
import { expiryFor } from '../../src/lib/clearance-rules';
import { zonedDate as localDate } from '../../src/lib/time';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import type { QuizQuestion } from '../../src/lib/quiz-rules';

let groups: { id: string; code: string; name: string; checklist: string[]; publishedQuizId: string | null; validityDays: number }[];
let machines: Record<string, string>;
let instructor: Client;
const glass = () => groups.find((g) => g.code === 'glass-tube')!;
const rf = () => groups.find((g) => g.code === 'rf-laser')!;

beforeAll(async () => {
  instructor = await Client.as('instructor');
  groups = (await body(await instructor.get('/api/machine-groups'))).groups;
  const rows = await testDb()('machines').select('id', 'code');
  machines = Object.fromEntries(rows.map((r) => [r.code, r.id]));
});

afterAll(async () => {
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

/** Every key anywhere in a JSON value. */
function keysDeep(v: unknown, out = new Set<string>()): Set<string> {
  if (Array.isArray(v)) v.forEach((x) => keysDeep(x, out));
  else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) { out.add(k); keysDeep(x, out); }
  return out;
}

async function bankOf(attemptId: string): Promise<QuizQuestion[]> {
  const row = await testDb()('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id').where('a.id', attemptId).first('v.questions');
  return row.questions;
}

async function takeQuiz(c: Client, quizId: string, right: boolean) {
  const start = await c.send('POST', `/api/quizzes/${quizId}/attempt`);
  expect(start.status).toBe(201);
  const attempt = await body(start);
  const bank = await bankOf(attempt.attemptId);
  const answers: Record<string, string[]> = {};
  for (const q of attempt.questions) {
    const key = bank.find((b) => b.id === q.id)!;
    answers[q.id] = right ? key.correct : [key.options.find((o) => !key.correct.includes(o.id))!.id];
  }
  const res = await c.send('POST', `/api/quizzes/${quizId}/attempts/${attempt.attemptId}`, { answers });
  return { attempt, res, result: await body(res) };
}

const checklist = (items: string[]) => items.map((item) => ({ item, done: true }));

describe('seeded clearances', () => {
  it('member is cleared on both groups with an expiry well ahead; the gate lets them run every laser', async () => {
    const me = (await body(await (await Client.as('member')).get('/api/clearances/me'))).clearances;
    expect(me.map((c: any) => c.state)).toEqual(['cleared', 'cleared']);
    for (const c of me) expect(new Date(c.expiresAt).getTime()).toBeGreaterThan(Date.now() + 200 * 86_400_000);
    const member = await testDb()('people').where({ email: DEMO.member }).first('id');
    for (const code of ['laser-a', 'laser-b', 'laser-c']) expect(await canOperate(member.id, machines[code]!, new Date())).toEqual({ ok: true });
  });

  it('instructor and steward are cleared too', async () => {
    for (const who of ['instructor', 'steward'] as const) {
      const p = await testDb()('people').where({ email: DEMO[who] }).first('id');
      expect(await canOperate(p.id, machines['laser-b']!, new Date())).toEqual({ ok: true });
    }
  });

  it('newbie is refused with the next step; student awaits sign-off; lapsed@ is lapsed', async () => {
    const newbie = await testDb()('people').where({ email: DEMO.newbie }).first('id');
    const v = await canOperate(newbie.id, machines['laser-a']!, new Date());
    expect(v).toEqual({ ok: false, state: 'none', message: 'Take the glass-tube lasers quiz on the Clearances screen, then book a practical sign-off with an instructor.' });
    const student = (await body(await (await Client.as('student')).get('/api/clearances/me'))).clearances;
    expect(student.find((c: any) => c.groupName === 'Glass-tube lasers').state).toBe('awaiting sign-off');
    const lapsed = await testDb()('people').where({ email: 'lapsed@tidewater.example' }).first('id');
    const lv = await canOperate(lapsed.id, machines['laser-c']!, new Date());
    expect(lv.ok).toBe(false);
    if (!lv.ok) expect(lv.state).toBe('lapsed');
  });

  it('each group has a published quiz with at least 10 questions', async () => {
    for (const g of groups) {
      expect(g.publishedQuizId).toBeTruthy();
      const v = await testDb()('quiz_versions').where({ quiz_id: g.publishedQuizId, status: 'published' }).first('questions');
      expect(v.questions.length).toBeGreaterThanOrEqual(10);
    }
  });
});

describe('roles on the clearance routes', () => {
  it('a member calling instructor routes gets 403', async () => {
    const m = await Client.as('member');
    expect((await m.get('/api/quizzes')).status).toBe(403);
    expect((await m.get('/api/signoffs')).status).toBe(403);
    const res = await m.send('POST', '/api/signoffs', { personId: glass().id, groupId: glass().id, checklist: [], notes: '' });
    expect(res.status).toBe(403);
    expect((await body(res)).error.code).toBe('forbidden');
    expect((await m.send('POST', `/api/clearances/${glass().id}/suspend`, { reason: 'testing' })).status).toBe(403);
    expect((await m.send('PUT', `/api/quizzes/${glass().publishedQuizId}/draft`, {})).status).toBe(403);
  });

  it('signed out gets 401; a malformed id is 404, never a 500', async () => {
    expect((await new Client().get('/api/clearances/me')).status).toBe(401);
    expect((await instructor.send('POST', '/api/clearances/not-an-id/suspend', { reason: 'testing' })).status).toBe(404);
    expect((await instructor.send('POST', '/api/quizzes/123/attempt')).status).toBe(404);
  });
});

describe('taking a quiz', () => {
  it('delivers questions without the answer key, scores on the server and names missed topics only', async () => {
    const p = await signUpNew('quizfail');
    const { attempt, res, result } = await takeQuiz(p.client, glass().publishedQuizId!, false);
    expect(attempt.questions).toHaveLength(10);
    const startKeys = keysDeep(attempt);
    expect(startKeys.has('correct')).toBe(false);
    expect(startKeys.has('explanation')).toBe(false);
    expect(res.status).toBe(200);
    expect(result.passed).toBe(false);
    expect(result.scorePct).toBe(0);
    expect(result.missedTopics.length).toBeGreaterThan(0);
    // the result names topics, never the correct options
    const bank = await bankOf(attempt.attemptId);
    const resultText = JSON.stringify(result);
    for (const q of bank) for (const c of q.correct) expect(resultText).not.toContain(`"${q.options.find((o) => o.id === c)!.text}"`);
    expect(result.results.every((r: any) => r.explanation === undefined)).toBe(true);
    // the attempt records the exact version
    const row = await testDb()('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id').where('a.id', attempt.attemptId).first('v.version', 'a.passed', 'a.score_pct');
    expect(row).toMatchObject({ passed: false, score_pct: 0 });
  });

  it('after a fail the next attempt waits for the cooldown: 429 attempt_limit with the time', async () => {
    const p = await signUpNew('cooldown');
    await takeQuiz(p.client, glass().publishedQuizId!, false);
    const res = await p.client.send('POST', `/api/quizzes/${glass().publishedQuizId}/attempt`);
    expect(res.status).toBe(429);
    const b = await body(res);
    expect(b.error.code).toBe('attempt_limit');
    expect(b.error.fields.reason).toBe('cooldown');
    const next = new Date(b.error.fields.nextAllowedAt).getTime();
    // seeded quiz: 10 minutes after the failed submission
    expect(next).toBeGreaterThan(Date.now() + 9 * 60_000);
    expect(next).toBeLessThanOrEqual(Date.now() + 10 * 60_000 + 5_000);
    expect(Number(res.headers.get('retry-after'))).toBeGreaterThan(500);
  });

  it('allows 3 starts in 24 hours (a start while one is open returns it), then 429 daily_limit', async () => {
    const p = await signUpNew('daily');
    const id = (await testDb()('people').where({ email: p.email }).first('id')).id;
    // two attempts that ran past their time limit earlier today, then one now; a second start now resumes it
    for (const h of [3, 2]) await startAttempt(id, rf().publishedQuizId!, new Date(Date.now() - h * 3_600_000));
    expect((await p.client.send('POST', `/api/quizzes/${rf().publishedQuizId}/attempt`)).status).toBe(201);
    expect((await p.client.send('POST', `/api/quizzes/${rf().publishedQuizId}/attempt`)).status).toBe(200);
    await testDb()('quiz_attempts').where({ person_id: id }).whereNull('submitted_at').orderBy('started_at', 'desc').limit(1).update({ started_at: new Date(Date.now() - 31 * 60_000) });
    const res = await p.client.send('POST', `/api/quizzes/${rf().publishedQuizId}/attempt`);
    expect(res.status).toBe(429);
    const b = await body(res);
    expect(b.error.fields.reason).toBe('daily_limit');
    expect(new Date(b.error.fields.nextAllowedAt).getTime()).toBeGreaterThan(Date.now() + 23 * 3_600_000);
  });

  it('refuses answers to someone else’s attempt, a second submission, and questions not drawn', async () => {
    const a = await signUpNew('owner');
    const b = await signUpNew('other');
    const attempt = await body(await a.client.send('POST', `/api/quizzes/${glass().publishedQuizId}/attempt`));
    const url = `/api/quizzes/${glass().publishedQuizId}/attempts/${attempt.attemptId}`;
    expect((await b.client.send('POST', url, { answers: {} })).status).toBe(404);
    expect((await a.client.send('POST', url, { answers: { nope: ['a'] } })).status).toBe(422);
    expect((await a.client.send('POST', url, { answers: {} })).status).toBe(200);
    expect((await a.client.send('POST', url, { answers: {} })).status).toBe(409);
  });
});

describe('the journey through the states, over the API', () => {
  let person: Awaited<ReturnType<typeof signUpNew>>;
  let personId: string;
  let clearanceId: string;

  beforeAll(async () => {
    person = await signUpNew('journey');
    personId = (await testDb()('people').where({ email: person.email }).first('id')).id;
  });

  it('quiz due: sign-off refused (409), gate refused', async () => {
    const res = await instructor.send('POST', '/api/signoffs', { personId, groupId: glass().id, checklist: checklist(glass().checklist), notes: '' });
    expect(res.status).toBe(409);
    expect((await body(res)).error.code).toBe('transition_refused');
    expect((await canOperate(personId, machines['laser-a']!, new Date())).ok).toBe(false);
  });

  it('quiz passed → awaiting sign-off, with the next step; taking it again is refused', async () => {
    const { result } = await takeQuiz(person.client, glass().publishedQuizId!, true);
    expect(result).toMatchObject({ passed: true, scorePct: 100, missedTopics: [], clearanceState: 'awaiting sign-off' });
    expect(result.nextStep).toMatch(/practical sign-off/);
    const again = await person.client.send('POST', `/api/quizzes/${glass().publishedQuizId}/attempt`);
    expect(again.status).toBe(409);
    expect((await body(again)).error.code).toBe('quiz_not_needed');
    const v = await canOperate(personId, machines['laser-a']!, new Date());
    expect(v).toMatchObject({ ok: false, state: 'awaiting sign-off' });
  });

  it('a sign-off with the checklist incomplete is refused (422)', async () => {
    const items = glass().checklist.map((item, i) => ({ item, done: i > 0 }));
    const res = await instructor.send('POST', '/api/signoffs', { personId, groupId: glass().id, checklist: items, notes: '' });
    expect(res.status).toBe(422);
    expect((await body(res)).error.code).toBe('checklist_incomplete');
  });

  it('an instructor cannot sign themselves off', async () => {
    const self = await testDb()('people').where({ email: DEMO.instructor }).first('id');
    const res = await instructor.send('POST', '/api/signoffs', { personId: self.id, groupId: glass().id, checklist: checklist(glass().checklist), notes: '' });
    expect(res.status).toBe(403);
    expect((await body(res)).error.code).toBe('self_signoff');
  });

  it('signed off → cleared, expiring at local midnight in Pacific/Auckland; recorded and audited', async () => {
    const before = Date.now();
    const res = await instructor.send('POST', '/api/signoffs', { personId, groupId: glass().id, checklist: checklist(glass().checklist), notes: 'Steady hands; knew the fire routine.' });
    expect(res.status).toBe(201);
    const b = await body(res);
    expect(b.state).toBe('cleared');
    clearanceId = b.clearanceId;
    const row = await testDb()('clearances').where({ id: clearanceId }).first();
    expect(row.state).toBe('cleared');
    const expected = expiryFor(row.cleared_at, glass().validityDays, 'Pacific/Auckland');
    expect(row.expires_at.toISOString()).toBe(expected.toISOString());
    expect(new Intl.DateTimeFormat('en-GB', { timeZone: 'Pacific/Auckland', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(row.expires_at)).toBe('00:00');
    expect(row.cleared_at.getTime()).toBeGreaterThanOrEqual(before - 1000);
    const signoff = await testDb()('signoffs').where({ clearance_id: clearanceId }).first();
    expect(signoff.notes).toBe('Steady hands; knew the fire routine.');
    expect(signoff.checklist).toEqual(glass().checklist);
    const audit = await testDb()('audit_log').where({ kind: 'clearance.signed_off', subject_id: clearanceId }).first();
    expect(audit.summary).toContain(person.name);
    const me = (await body(await person.client.get('/api/clearances/me'))).clearances.find((c: any) => c.groupId === glass().id);
    expect(me).toMatchObject({ state: 'cleared', level: 'basic', expiresAt: expected.toISOString() });
    expect(await canOperate(personId, machines['laser-a']!, new Date())).toEqual({ ok: true });
    expect(await canOperate(personId, machines['laser-c']!, new Date())).toEqual({ ok: true });
    expect((await canOperate(personId, machines['laser-b']!, new Date())).ok).toBe(false);
  });

  it('a second basic sign-off is refused; an advanced one is allowed', async () => {
    const again = await instructor.send('POST', '/api/signoffs', { personId, groupId: glass().id, checklist: checklist(glass().checklist), notes: '' });
    expect(again.status).toBe(409);
    const adv = await instructor.send('POST', '/api/signoffs', { personId, groupId: glass().id, checklist: checklist(glass().checklist), notes: 'rotary axis', level: 'advanced' });
    expect(adv.status).toBe(201);
    expect((await body(adv)).level).toBe('advanced');
  });

  it('suspension blocks canOperate; reinstating restores it; both refused when they do not apply', async () => {
    expect((await instructor.send('POST', `/api/clearances/${clearanceId}/reinstate`, { reason: 'not suspended' })).status).toBe(409);
    const s = await instructor.send('POST', `/api/clearances/${clearanceId}/suspend`, { reason: 'Left a job running unattended' });
    expect(s.status).toBe(200);
    const v = await canOperate(personId, machines['laser-a']!, new Date());
    expect(v.ok).toBe(false);
    if (!v.ok) {
      expect(v.state).toBe('suspended');
      expect(v.message).toMatch(/suspended/);
    }
    expect((await instructor.send('POST', `/api/clearances/${clearanceId}/suspend`, { reason: 'again' })).status).toBe(409);
    const me = (await body(await person.client.get('/api/clearances/me'))).clearances.find((c: any) => c.groupId === glass().id);
    expect(me).toMatchObject({ state: 'suspended', suspendedReason: 'Left a job running unattended' });
    expect((await person.client.send('POST', `/api/quizzes/${glass().publishedQuizId}/attempt`)).status).toBe(409);
    const r = await instructor.send('POST', `/api/clearances/${clearanceId}/reinstate`, { reason: 'Went over the fire routine again' });
    expect(await body(r)).toMatchObject({ state: 'cleared' });
    expect(await canOperate(personId, machines['laser-a']!, new Date())).toEqual({ ok: true });
    const kinds = (await testDb()('audit_log').where({ subject_id: clearanceId }).select('kind')).map((x) => x.kind);
    expect(kinds).toEqual(expect.arrayContaining(['clearance.suspended', 'clearance.reinstated']));
  });

  it('expiry: cleared until the instant before, lapsed from the instant itself, even before the sweep', async () => {
    const row = await testDb()('clearances').where({ id: clearanceId }).first();
    const exp: Date = row.expires_at;
    expect(await canOperate(personId, machines['laser-a']!, new Date(exp.getTime() - 1))).toEqual({ ok: true });
    const v = await canOperate(personId, machines['laser-a']!, exp);
    expect(v).toMatchObject({ ok: false, state: 'lapsed' });
    // the local date of the last valid instant is the validity end day in Auckland
    expect(localDate(new Date(exp.getTime() - 1), 'Pacific/Auckland')).not.toBe(localDate(exp, 'Pacific/Auckland'));
  });

  it('the sweep warns 14 days ahead once, then writes the lapse at the expiry', async () => {
    const exp: Date = (await testDb()('clearances').where({ id: clearanceId }).first()).expires_at;
    const day = 86_400_000;
    expect(await sweepClearances(new Date(exp.getTime() - 15 * day), personId)).toEqual({ lapsed: 0, warned: 0 });
    expect(await sweepClearances(new Date(exp.getTime() - 3 * day), personId)).toEqual({ lapsed: 0, warned: 1 });
    expect(await sweepClearances(new Date(exp.getTime() - 2 * day), personId)).toEqual({ lapsed: 0, warned: 0 });
    expect(await sweepClearances(new Date(exp.getTime() - 1), personId)).toEqual({ lapsed: 0, warned: 0 });
    expect((await testDb()('clearances').where({ id: clearanceId }).first()).state).toBe('cleared');
    expect(await sweepClearances(exp, personId)).toEqual({ lapsed: 1, warned: 0 });
    expect((await testDb()('clearances').where({ id: clearanceId }).first()).state).toBe('lapsed');
    expect(await testDb()('audit_log').where({ kind: 'clearance.lapsed', subject_id: clearanceId }).first()).toBeTruthy();
    const me = (await body(await person.client.get('/api/clearances/me'))).clearances.find((c: any) => c.groupId === glass().id);
    expect(me.state).toBe('lapsed');
    expect(me.canTakeQuiz).toBe(true);
  });

  it('lapsed + refresher quiz passed → cleared again (this group asks for the quiz only)', async () => {
    const { result } = await takeQuiz(person.client, glass().publishedQuizId!, true);
    expect(result.clearanceState).toBe('cleared');
    expect(await canOperate(personId, machines['laser-a']!, new Date())).toEqual({ ok: true });
  });
});

describe('quiz versions', () => {
  it('saving makes a draft version; members keep the published one until it is published; published versions are frozen', async () => {
    const quizId = glass().publishedQuizId!;
    const editor = await body(await instructor.get(`/api/quizzes/${quizId}`));
    const v1 = editor.current;
    expect(v1.status).toBe('published');
    const { id: _id, version: _v, status: _s, publishedAt: _p, updatedAt: _u, ...draft } = v1;
    const saved = await instructor.send('PUT', `/api/quizzes/${quizId}/draft`, { ...draft, title: `${draft.title} (revised)` });
    expect(saved.status).toBe(200);
    const draftVersion = (await body(saved)).version;
    expect(draftVersion).toBe(v1.version + 1);
    const p = await signUpNew('versions');
    const before = await body(await p.client.send('POST', `/api/quizzes/${quizId}/attempt`));
    expect(before.version).toBe(v1.version);
    expect((await instructor.send('POST', `/api/quizzes/${quizId}/publish`)).status).toBe(200);
    const after = await body(await p.client.send('POST', `/api/quizzes/${quizId}/attempt`));
    expect(after.version).toBe(draftVersion);
    expect(after.title).toMatch(/\(revised\)$/);
    // the earlier attempt still points at the version it took
    const rows = await testDb()('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id').whereIn('a.id', [before.attemptId, after.attemptId]).select('a.id', 'v.version', 'v.status');
    expect(rows.find((r) => r.id === before.attemptId)).toMatchObject({ version: v1.version, status: 'retired' });
    await expect(testDb()('quiz_versions').where({ quiz_id: quizId, version: v1.version }).update({ title: 'changed' })).rejects.toThrow(/frozen/);
    expect((await instructor.send('POST', `/api/quizzes/${quizId}/publish`)).status).toBe(409);
  });

  it('the editor refuses an invalid bank with field messages (422)', async () => {
    const quizId = rf().publishedQuizId!;
    const res = await instructor.send('PUT', `/api/quizzes/${quizId}/draft`, {
      title: 'Bad', passMarkPct: 80, questionsPerAttempt: 3, attemptsPerDay: 3, cooldownMinutes: 10,
      questions: [{ id: 'x', topic: 'T', prompt: 'Which?', kind: 'single', options: [{ id: 'a', text: 'A' }, { id: 'b', text: 'B' }], correct: ['a', 'b'] }],
    });
    expect(res.status).toBe(422);
    const b = await body(res);
    expect(Object.keys(b.error.fields)).toEqual(expect.arrayContaining(['questions.0.correct']));
    expect(await testDb()('quiz_versions').where({ quiz_id: quizId, status: 'draft' }).first()).toBeUndefined();
  });
});

describe('group settings', () => {
  it('an admin sets validity and refresher rule; an instructor may change only the checklist; both audited', async () => {
    const admin = await Client.as('admin');
    const g = rf();
    const res = await admin.send('PATCH', `/api/machine-groups/${g.id}`, { validityDays: 180, refresher: 'quiz' });
    expect(res.status).toBe(200);
    expect(await body(res)).toMatchObject({ validityDays: 180, refresher: 'quiz' });
    const refused = await instructor.send('PATCH', `/api/machine-groups/${g.id}`, { validityDays: 30 });
    expect(refused.status).toBe(403);
    const items = [...g.checklist, 'Cleans the bed and the honeycomb after the job'];
    const ok = await instructor.send('PATCH', `/api/machine-groups/${g.id}`, { checklist: items });
    expect((await body(ok)).checklist).toEqual(items);
    expect((await (await Client.as('member')).send('PATCH', `/api/machine-groups/${g.id}`, { checklist: items })).status).toBe(403);
    expect((await admin.send('PATCH', `/api/machine-groups/${g.id}`, { validityDays: 0 })).status).toBe(422);
    // back to the seeded settings
    await admin.send('PATCH', `/api/machine-groups/${g.id}`, { validityDays: g.validityDays, refresher: 'quiz_and_signoff', checklist: g.checklist });
    const audits = await testDb()('audit_log').where({ kind: 'machine_group.updated', subject_id: g.id }).count<{ n: number }[]>({ n: '*' });
    expect(Number(audits[0]!.n)).toBeGreaterThanOrEqual(3);
  });
});
