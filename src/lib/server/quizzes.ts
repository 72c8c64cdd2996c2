/**
 * Quizzes: all SQL of quizzes, their versions and attempts. Editing writes a draft version;
 * publishing freezes it (a database trigger refuses later edits); every attempt records its version.
 * Answers are scored here only — the answer key never leaves the server.
 */
import type { QuizIntro } from '@lib/quiz-rules';
import { db, transaction } from './db';
import { DomainError } from './errors';
import { recordAudit } from './audit';
import { recordQuizPass } from './clearances/transitions';
import { effectiveState, type ClearanceState } from '@lib/clearance-rules';
import {
  SUBMIT_GRACE_SECONDS, attemptGate, attemptOpen, attemptsLeft, deliver, drawQuestions, scoreAttempt,
  type Answers, type DeliveredQuestion, type StartedAttempt, type SubmittedAttempt, type DrawnQuestion, type QuizDraft, type QuizQuestion,
} from '@lib/quiz-rules';

export interface QuizVersionView {
  id: string;
  version: number;
  status: 'draft' | 'published' | 'retired';
  title: string;
  passMarkPct: number;
  questionsPerAttempt: number;
  attemptsPerDay: number;
  cooldownMinutes: number;
  timeLimitMinutes: number;
  questions: QuizQuestion[];
  publishedAt: string | null;
  updatedAt: string;
}

export interface QuizSummary {
  id: string;
  groupId: string;
  groupName: string;
  title: string;
  published: { version: number; publishedAt: string; questionCount: number } | null;
  draft: { version: number; updatedAt: string } | null;
  attempts: number;
}

function versionView(v: any): QuizVersionView {
  return {
    id: v.id, version: v.version, status: v.status, title: v.title, passMarkPct: v.pass_mark_pct,
    questionsPerAttempt: v.questions_per_attempt, attemptsPerDay: v.attempts_per_day, cooldownMinutes: v.cooldown_minutes,
    timeLimitMinutes: v.time_limit_minutes, questions: v.questions, publishedAt: v.published_at?.toISOString() ?? null, updatedAt: v.updated_at.toISOString(),
  };
}

export async function listQuizzes(): Promise<QuizSummary[]> {
  const q = db();
  const quizzes = await q('quizzes as z').join('machine_groups as g', 'g.id', 'z.group_id').orderBy('g.name').orderBy('z.title').select('z.id', 'z.group_id', 'g.name as group_name', 'z.title');
  const versions = await q('quiz_versions').whereIn('status', ['draft', 'published']).select('quiz_id', 'version', 'status', 'published_at', 'updated_at', q.raw('jsonb_array_length(questions) as n'));
  const counts = await q('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id').groupBy('v.quiz_id').select('v.quiz_id', q.raw('count(*)::int as n'));
  return quizzes.map((z) => {
    const pub = versions.find((v) => v.quiz_id === z.id && v.status === 'published');
    const draft = versions.find((v) => v.quiz_id === z.id && v.status === 'draft');
    return {
      id: z.id, groupId: z.group_id, groupName: z.group_name, title: z.title,
      published: pub ? { version: pub.version, publishedAt: pub.published_at.toISOString(), questionCount: Number(pub.n) } : null,
      draft: draft ? { version: draft.version, updatedAt: draft.updated_at.toISOString() } : null,
      attempts: Number(counts.find((c) => c.quiz_id === z.id)?.n ?? 0),
    };
  });
}

/** The quiz for its editor: the draft if there is one, else the published version, and the version history. */
export async function getQuizForEditor(id: string) {
  const q = db();
  const quiz = await q('quizzes as z').join('machine_groups as g', 'g.id', 'z.group_id').where('z.id', id).first('z.id', 'z.group_id', 'g.name as group_name', 'z.title');
  if (!quiz) throw new DomainError('not_found', 'not_found', 'No such quiz.');
  const versions = await q('quiz_versions').where({ quiz_id: id }).orderBy('version', 'desc');
  const current = versions.find((v) => v.status === 'draft') ?? versions.find((v) => v.status === 'published') ?? versions[0];
  return {
    id: quiz.id, groupId: quiz.group_id, groupName: quiz.group_name, title: quiz.title,
    current: current ? versionView(current) : null,
    history: versions.map((v) => ({ version: v.version, status: v.status, publishedAt: v.published_at?.toISOString() ?? null, questionCount: (v.questions as unknown[]).length })),
  };
}

export async function createQuiz(actorId: string, groupId: string, draft: QuizDraft): Promise<{ id: string; version: number }> {
  return transaction(async (trx) => {
    const g = await trx('machine_groups').where({ id: groupId }).first('id', 'name');
    if (!g) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { groupId: 'No such machine group.' });
    if (await trx('quizzes').where({ group_id: groupId }).first('id')) {
      throw new DomainError('conflict', 'quiz_exists', `${g.name} already has a quiz; edit it to make a new version.`);
    }
    const [quiz] = await trx('quizzes').insert({ group_id: groupId, title: draft.title, created_by: actorId }).returning('id');
    await trx('quiz_versions').insert({ quiz_id: quiz.id, version: 1, status: 'draft', ...draftColumns(draft), edited_by: actorId });
    await recordAudit(trx, { actorId, kind: 'quiz.created', subjectType: 'quiz', subjectId: quiz.id, summary: `Created the quiz “${draft.title}” for ${g.name}` });
    return { id: quiz.id as string, version: 1 };
  });
}

function draftColumns(d: QuizDraft) {
  return {
    title: d.title, pass_mark_pct: d.passMarkPct, questions_per_attempt: d.questionsPerAttempt,
    attempts_per_day: d.attemptsPerDay, cooldown_minutes: d.cooldownMinutes, time_limit_minutes: d.timeLimitMinutes, questions: JSON.stringify(d.questions),
  };
}

/** Saves the draft: updates the open draft, or starts a new draft version after the published one. */
export async function saveDraft(actorId: string, quizId: string, draft: QuizDraft): Promise<{ version: number }> {
  return transaction(async (trx) => {
    const quiz = await trx('quizzes').where({ id: quizId }).forUpdate().first();
    if (!quiz) throw new DomainError('not_found', 'not_found', 'No such quiz.');
    const open = await trx('quiz_versions').where({ quiz_id: quizId, status: 'draft' }).first();
    let version: number;
    if (open) {
      await trx('quiz_versions').where({ id: open.id }).update({ ...draftColumns(draft), edited_by: actorId, updated_at: trx.fn.now() });
      version = open.version;
    } else {
      const max = await trx('quiz_versions').where({ quiz_id: quizId }).max<{ max: number | null }>('version as max').first();
      version = (max?.max ?? 0) + 1;
      await trx('quiz_versions').insert({ quiz_id: quizId, version, status: 'draft', ...draftColumns(draft), edited_by: actorId });
    }
    await trx('quizzes').where({ id: quizId }).update({ title: draft.title, updated_at: trx.fn.now() });
    await recordAudit(trx, { actorId, kind: 'quiz.draft_saved', subjectType: 'quiz', subjectId: quizId, summary: `Saved draft version ${version} of “${draft.title}” (${draft.questions.length} questions)` });
    return { version };
  });
}

/** Throws away the open draft; the published version stays what members get. A quiz never published keeps its draft. */
export async function discardDraft(actorId: string, quizId: string): Promise<{ discardedVersion: number }> {
  return transaction(async (trx) => {
    const quiz = await trx('quizzes').where({ id: quizId }).forUpdate().first('id', 'title');
    if (!quiz) throw new DomainError('not_found', 'not_found', 'No such quiz.');
    const draft = await trx('quiz_versions').where({ quiz_id: quizId, status: 'draft' }).first('id', 'version', 'title');
    if (!draft) throw new DomainError('conflict', 'no_draft', 'There is no draft to discard.');
    const published = await trx('quiz_versions').where({ quiz_id: quizId, status: 'published' }).first('title');
    if (!published) throw new DomainError('conflict', 'never_published', 'This quiz has never been published: its draft is all there is. Edit it instead.');
    await trx('quiz_versions').where({ id: draft.id }).delete();
    await trx('quizzes').where({ id: quizId }).update({ title: published.title, updated_at: trx.fn.now() });
    await recordAudit(trx, { actorId, kind: 'quiz.draft_discarded', subjectType: 'quiz', subjectId: quizId, summary: `Discarded draft version ${draft.version} of “${draft.title}”` });
    return { discardedVersion: draft.version as number };
  });
}

/** Publishes the open draft: the previously published version is retired; the new one is frozen. */
export async function publish(actorId: string, quizId: string): Promise<{ version: number }> {
  return transaction(async (trx) => {
    const quiz = await trx('quizzes').where({ id: quizId }).forUpdate().first();
    if (!quiz) throw new DomainError('not_found', 'not_found', 'No such quiz.');
    const draft = await trx('quiz_versions').where({ quiz_id: quizId, status: 'draft' }).first();
    if (!draft) throw new DomainError('conflict', 'nothing_to_publish', 'There is no draft to publish; edit the quiz first.');
    if (draft.questions_per_attempt > (draft.questions as unknown[]).length) {
      throw new DomainError('conflict', 'draft_invalid', 'The draft draws more questions than its bank holds.');
    }
    await trx('quiz_versions').where({ quiz_id: quizId, status: 'published' }).update({ status: 'retired', updated_at: trx.fn.now() });
    await trx('quiz_versions').where({ id: draft.id }).update({ status: 'published', published_at: trx.fn.now(), published_by: actorId, updated_at: trx.fn.now() });
    await recordAudit(trx, { actorId, kind: 'quiz.published', subjectType: 'quiz', subjectId: quizId, summary: `Published version ${draft.version} of “${draft.title}”` });
    return { version: draft.version as number };
  });
}

// ---------------------------------------------------------------------------------------------
// Taking a quiz

const QUIZ_STATES: ClearanceState[] = ['quiz due', 'lapsed'];

async function clearanceStateFor(trx: any, personId: string, groupId: string, at: Date): Promise<ClearanceState> {
  const row = await trx('clearances').where({ person_id: personId, group_id: groupId }).first('state', 'expires_at');
  return row ? effectiveState(row.state, row.expires_at, at) : 'quiz due';
}

function refuseState(state: ClearanceState): never {
  const why: Partial<Record<ClearanceState, string>> = {
    'awaiting sign-off': 'You have already passed this quiz; the next step is a practical sign-off with an instructor.',
    cleared: 'You are already cleared on these machines; the quiz is taken again when the clearance lapses.',
    suspended: 'Your clearance is suspended; ask an instructor about reinstating it.',
  };
  throw new DomainError('conflict', 'quiz_not_needed', why[state] ?? 'This quiz is not open to you now.');
}

/** Starts an attempt on the published version: draws and shuffles questions; answers stay on the server. */
export async function startAttempt(personId: string, quizId: string, now = new Date()): Promise<StartedAttempt> {
  return transaction(async (trx) => {
    const quiz = await trx('quizzes as z').join('machine_groups as g', 'g.id', 'z.group_id').where('z.id', quizId).first('z.id', 'z.group_id', 'g.name as group_name');
    if (!quiz) throw new DomainError('not_found', 'not_found', 'No such quiz.');
    // one start at a time per person and group, so concurrent requests cannot exceed the limit
    await trx.raw('SELECT pg_advisory_xact_lock(hashtext(?))', [`quiz-attempt:${personId}:${quiz.group_id}`]);
    const version = await trx('quiz_versions').where({ quiz_id: quizId, status: 'published' }).first();
    if (!version) throw new DomainError('conflict', 'not_published', 'This quiz has no published version yet.');
    const state = await clearanceStateFor(trx, personId, quiz.group_id, now);
    if (!QUIZ_STATES.includes(state)) refuseState(state);
    const bank = version.questions as QuizQuestion[];
    // an attempt still open on this version is returned as it was left: a reload or a second tab never counts again
    const open = await trx('quiz_attempts')
      .where({ person_id: personId, quiz_version_id: version.id })
      .whereNull('submitted_at')
      .where('started_at', '>', new Date(now.getTime() - version.time_limit_minutes * 60_000))
      .orderBy('started_at', 'desc')
      .first('id', 'drawn', 'started_at', 'answers');
    if (open) {
      return {
        attemptId: open.id, quizId, version: version.version, title: version.title, groupName: quiz.group_name,
        passMarkPct: version.pass_mark_pct, questions: deliver(bank, open.drawn as DrawnQuestion[]),
        submitBy: new Date(open.started_at.getTime() + version.time_limit_minutes * 60_000).toISOString(),
        timeLimitMinutes: version.time_limit_minutes, answers: (open.answers as Answers | null) ?? {}, resumed: true,
      };
    }
    const past = await trx('quiz_attempts').where({ person_id: personId, group_id: quiz.group_id }).where('started_at', '>', new Date(now.getTime() - 8 * 86_400_000)).select('started_at', 'submitted_at', 'passed');
    const gate = attemptGate(
      past.map((p) => ({ startedAt: p.started_at, submittedAt: p.submitted_at, passed: p.passed })),
      now,
      { attemptsPerDay: version.attempts_per_day, cooldownMinutes: version.cooldown_minutes },
    );
    if (!gate.ok) {
      const when = gate.nextAllowedAt.toISOString();
      const text = gate.reason === 'cooldown'
        ? `Take a break after a missed attempt: you can try again from ${when}. Read over the topics you missed meanwhile.`
        : `You have used the ${version.attempts_per_day} attempts allowed in 24 hours; the next is allowed from ${when}.`;
      const retryAfter = String(Math.max(1, Math.ceil((gate.nextAllowedAt.getTime() - now.getTime()) / 1000)));
      throw new DomainError('too_many', 'attempt_limit', text, { nextAllowedAt: when, reason: gate.reason }, { retryAfterSeconds: Number(retryAfter) });
    }
    const drawn = drawQuestions(bank, version.questions_per_attempt);
    const [attempt] = await trx('quiz_attempts').insert({
      quiz_version_id: version.id, person_id: personId, group_id: quiz.group_id, drawn: JSON.stringify(drawn), started_at: now,
    }).returning('id');
    return {
      attemptId: attempt.id, quizId, version: version.version, title: version.title, groupName: quiz.group_name,
      passMarkPct: version.pass_mark_pct, questions: deliver(bank, drawn),
      submitBy: new Date(now.getTime() + version.time_limit_minutes * 60_000).toISOString(),
      timeLimitMinutes: version.time_limit_minutes, answers: {}, resumed: false,
    };
  });
}

/** Scores an attempt on the server; a pass moves the clearance on (in the same transaction). */
export async function submitAttempt(personId: string, quizId: string, attemptId: string, answers: Answers, now = new Date()): Promise<SubmittedAttempt> {
  return transaction(async (trx) => {
    const attempt = await trx('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id')
      .where('a.id', attemptId).where('v.quiz_id', quizId).forUpdate('a')
      .first('a.id', 'a.person_id', 'a.group_id', 'a.drawn', 'a.started_at', 'a.submitted_at', 'v.questions', 'v.pass_mark_pct', 'v.time_limit_minutes');
    if (!attempt || attempt.person_id !== personId) throw new DomainError('not_found', 'not_found', 'No such attempt.');
    if (attempt.submitted_at) throw new DomainError('conflict', 'already_submitted', 'This attempt was already submitted; start a new one.');
    if (!attemptOpen(attempt.started_at, attempt.time_limit_minutes + SUBMIT_GRACE_SECONDS / 60, now)) {
      throw new DomainError('conflict', 'attempt_expired', `The ${attempt.time_limit_minutes} minutes of this attempt have run out; it counts as one of today’s attempts. Start a new one when the quiz allows.`);
    }
    const drawn = attempt.drawn as DrawnQuestion[];
    const known = new Set(drawn.map((d) => d.id));
    const extra = Object.keys(answers).filter((k) => !known.has(k));
    if (extra.length) throw new DomainError('invalid', 'invalid', 'Some answers are for questions not in this attempt.', { answers: `Unknown question(s): ${extra.slice(0, 5).join(', ')}` });
    const score = scoreAttempt(attempt.questions as QuizQuestion[], drawn, answers, attempt.pass_mark_pct);
    await trx('quiz_attempts').where({ id: attemptId }).update({
      submitted_at: now, answers: JSON.stringify(answers), score_pct: score.scorePct, passed: score.passed, missed_topics: JSON.stringify(score.missedTopics),
    });
    let clearanceState = await clearanceStateFor(trx, personId, attempt.group_id, now);
    let step = score.passed ? '' : `Read over the topics you missed, then try again when the quiz allows.`;
    if (score.passed) {
      if (QUIZ_STATES.includes(clearanceState)) {
        const r = await recordQuizPass(trx, personId, attempt.group_id, now);
        clearanceState = r.state;
        step = r.nextStep;
      } else {
        step = 'Your clearance did not need this quiz; nothing changed.';
      }
    }
    await recordAudit(trx, {
      actorId: personId, kind: score.passed ? 'quiz.attempt_passed' : 'quiz.attempt_failed', subjectType: 'quiz_attempt', subjectId: attemptId,
      summary: `${score.passed ? 'Passed' : 'Did not pass'} a quiz attempt with ${score.scorePct} %`, after: { scorePct: score.scorePct, missedTopics: score.missedTopics },
    });
    return {
      attemptId, scorePct: score.scorePct, correctCount: score.correctCount, total: score.total, passMarkPct: attempt.pass_mark_pct,
      passed: score.passed, missedTopics: score.missedTopics, results: score.results, clearanceState, nextStep: step,
    };
  });
}

/** Saves the answers of an open attempt as they are picked (replacing what was saved); scoring waits for the submit. */
export async function saveAnswers(personId: string, quizId: string, attemptId: string, answers: Answers, now = new Date()): Promise<{ savedAt: string; answered: number }> {
  return transaction(async (trx) => {
    const attempt = await trx('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id')
      .where('a.id', attemptId).where('v.quiz_id', quizId).forUpdate('a')
      .first('a.id', 'a.person_id', 'a.drawn', 'a.started_at', 'a.submitted_at', 'v.time_limit_minutes');
    if (!attempt || attempt.person_id !== personId) throw new DomainError('not_found', 'not_found', 'No such attempt.');
    if (attempt.submitted_at) throw new DomainError('conflict', 'already_submitted', 'This attempt was already submitted.');
    if (!attemptOpen(attempt.started_at, attempt.time_limit_minutes + SUBMIT_GRACE_SECONDS / 60, now)) {
      throw new DomainError('conflict', 'attempt_expired', `The ${attempt.time_limit_minutes} minutes of this attempt have run out.`);
    }
    const known = new Set((attempt.drawn as DrawnQuestion[]).map((d) => d.id));
    const extra = Object.keys(answers).filter((k) => !known.has(k));
    if (extra.length) throw new DomainError('invalid', 'invalid', 'Some answers are for questions not in this attempt.', { answers: `Unknown question(s): ${extra.slice(0, 5).join(', ')}` });
    await trx('quiz_attempts').where({ id: attemptId }).update({ answers: JSON.stringify(answers), answers_saved_at: now });
    return { savedAt: now.toISOString(), answered: Object.values(answers).filter((a) => a.length > 0).length };
  });
}


/** What the quiz's intro shows before a start: the facts of the published version and this person's attempts. */
export type { QuizIntro };

export async function quizIntro(personId: string, quizId: string, now = new Date()): Promise<QuizIntro | null> {
  const q = db();
  const quiz = await q('quizzes as z').join('machine_groups as g', 'g.id', 'z.group_id').where('z.id', quizId).first('z.id', 'z.group_id', 'g.name as group_name');
  if (!quiz) return null;
  const version = await q('quiz_versions').where({ quiz_id: quizId, status: 'published' }).first();
  if (!version) return null;
  const state = await clearanceStateFor(q, personId, quiz.group_id, now);
  const past = await q('quiz_attempts').where({ person_id: personId, group_id: quiz.group_id }).where('started_at', '>', new Date(now.getTime() - 8 * 86_400_000))
    .select('id', 'quiz_version_id', 'started_at', 'submitted_at', 'passed', 'answers');
  const open = past
    .filter((p) => p.quiz_version_id === version.id && !p.submitted_at && attemptOpen(p.started_at, version.time_limit_minutes, now))
    .sort((a, b) => b.started_at.getTime() - a.started_at.getTime())[0];
  const gatePast = past.map((p) => ({ startedAt: p.started_at, submittedAt: p.submitted_at, passed: p.passed }));
  const gate = attemptGate(gatePast, now, { attemptsPerDay: version.attempts_per_day, cooldownMinutes: version.cooldown_minutes });
  let notNeeded: string | null = null;
  if (!QUIZ_STATES.includes(state)) {
    try { refuseState(state); } catch (e) { notNeeded = (e as Error).message; }
  }
  return {
    quizId, title: version.title, groupName: quiz.group_name,
    questionCount: Math.min(version.questions_per_attempt, (version.questions as unknown[]).length),
    passMarkPct: version.pass_mark_pct, attemptsPerDay: version.attempts_per_day,
    attemptsLeft: attemptsLeft(gatePast, now, version.attempts_per_day),
    cooldownMinutes: version.cooldown_minutes, timeLimitMinutes: version.time_limit_minutes,
    openAttempt: open ? {
      attemptId: open.id, submitBy: new Date(open.started_at.getTime() + version.time_limit_minutes * 60_000).toISOString(),
      answered: Object.values((open.answers as Answers | null) ?? {}).filter((a) => a.length > 0).length,
    } : null,
    nextAllowed: !open && !gate.ok ? { at: gate.nextAllowedAt.toISOString(), reason: gate.reason } : null,
    notNeeded,
  };
}
