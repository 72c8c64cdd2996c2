/**
 * Quizzes: the shape of a question bank (shared by the editor island and the server), drawing and
 * shuffling an attempt, scoring on the server, and attempt limits. Pure (no I/O).
 */
import { z } from '@lib/zod';
import type { ClearanceState } from './clearance-rules';

const optionId = z.string().trim().min(1).max(40);

/** The time limit of an attempt unless the instructor sets another. */
export const DEFAULT_TIME_LIMIT_MINUTES = 30;

export const quizOptionSchema = z.object({
  id: optionId,
  text: z.string().trim().min(1, 'Write the option.').max(300, 'Use at most 300 characters.'),
});

export const quizQuestionSchema = z
  .object({
    id: z.string().trim().min(1).max(40),
    topic: z.string().trim().min(1, 'Name the topic (shown when it is missed).').max(80, 'Use at most 80 characters.'),
    prompt: z.string().trim().min(3, 'Write the question.').max(600, 'Use at most 600 characters.'),
    kind: z.enum(['single', 'multi']),
    options: z.array(quizOptionSchema).min(2, 'Give at least two options.').max(8, 'Use at most eight options.'),
    correct: z.array(optionId).min(1, 'Mark at least one option correct.'),
    explanation: z.string().trim().max(1000, 'Use at most 1000 characters.').optional(),
  })
  .superRefine((q, ctx) => {
    const ids = q.options.map((o) => o.id);
    if (new Set(ids).size !== ids.length) ctx.addIssue({ code: 'custom', path: ['options'], message: 'Option ids must be unique.' });
    if (q.correct.some((c) => !ids.includes(c))) ctx.addIssue({ code: 'custom', path: ['correct'], message: 'A correct answer must be one of the options.' });
    if (new Set(q.correct).size !== q.correct.length) ctx.addIssue({ code: 'custom', path: ['correct'], message: 'Mark each correct option once.' });
    if (q.kind === 'single' && q.correct.length !== 1) ctx.addIssue({ code: 'custom', path: ['correct'], message: 'A single-choice question has exactly one correct option.' });
    if (q.kind === 'multi' && q.correct.length === q.options.length) ctx.addIssue({ code: 'custom', path: ['correct'], message: 'Leave at least one option wrong in a multi-select question.' });
  });

export type QuizQuestion = z.infer<typeof quizQuestionSchema>;

export const quizSettingsSchema = z.object({
  title: z.string().trim().min(3, 'Give the quiz a title.').max(120, 'Use at most 120 characters.'),
  passMarkPct: z.coerce.number().int('Use a whole number.').min(1, 'At least 1 %.').max(100, 'At most 100 %.'),
  questionsPerAttempt: z.coerce.number().int('Use a whole number.').min(1, 'Draw at least one question.').max(100, 'At most 100.'),
  attemptsPerDay: z.coerce.number().int('Use a whole number.').min(1, 'At least 1.').max(50, 'At most 50.'),
  cooldownMinutes: z.coerce.number().int('Use a whole number.').min(0, 'Zero or more minutes.').max(10080, 'At most a week (10080 minutes).'),
  /** How long an attempt stays open; an attempt left open longer expires (and still counts as one of the day's). */
  timeLimitMinutes: z.coerce.number().int('Use a whole number.').min(5, 'At least 5 minutes.').max(240, 'At most 240 minutes.').default(DEFAULT_TIME_LIMIT_MINUTES),
});

export const quizDraftSchema = quizSettingsSchema
  .extend({ questions: z.array(quizQuestionSchema).min(1, 'Add at least one question.').max(200, 'At most 200 questions.') })
  .superRefine((d, ctx) => {
    if (d.questionsPerAttempt > d.questions.length) {
      ctx.addIssue({ code: 'custom', path: ['questionsPerAttempt'], message: `The bank holds ${d.questions.length} question(s); draw at most that many.` });
    }
    const ids = d.questions.map((q) => q.id);
    if (new Set(ids).size !== ids.length) ctx.addIssue({ code: 'custom', path: ['questions'], message: 'Question ids must be unique.' });
  });

export type QuizDraft = z.infer<typeof quizDraftSchema>;

/** A question as delivered to the person taking the quiz: no correct options, no explanation. */
export interface DeliveredQuestion {
  id: string;
  topic: string;
  prompt: string;
  kind: 'single' | 'multi';
  options: { id: string; text: string }[];
}

/** What an attempt records of the draw: question ids and option order, in the order shown. */
export interface DrawnQuestion {
  id: string;
  optionOrder: string[];
}

export function shuffle<T>(items: readonly T[], random: () => number): T[] {
  const a = [...items];
  for (let i = a.length - 1; i > 0; i--) {
    const j = Math.floor(random() * (i + 1));
    [a[i], a[j]] = [a[j]!, a[i]!];
  }
  return a;
}

/** Draws `count` questions from the bank in a random order, each with its options shuffled. */
export function drawQuestions(bank: readonly QuizQuestion[], count: number, random: () => number = Math.random): DrawnQuestion[] {
  return shuffle(bank, random)
    .slice(0, Math.min(count, bank.length))
    .map((q) => ({ id: q.id, optionOrder: shuffle(q.options.map((o) => o.id), random) }));
}

/** The public form of a draw: prompts and options only. */
export function deliver(bank: readonly QuizQuestion[], drawn: readonly DrawnQuestion[]): DeliveredQuestion[] {
  const byId = new Map(bank.map((q) => [q.id, q]));
  return drawn.map((d) => {
    const q = byId.get(d.id);
    if (!q) throw new Error(`question ${d.id} is not in this quiz version`);
    const opts = new Map(q.options.map((o) => [o.id, o.text]));
    return { id: q.id, topic: q.topic, prompt: q.prompt, kind: q.kind, options: d.optionOrder.map((id) => ({ id, text: opts.get(id) ?? '' })) };
  });
}

export type Answers = Record<string, string[]>;

export interface QuestionResult {
  questionId: string;
  topic: string;
  prompt: string;
  correct: boolean;
  /** The instructor's explanation; given for questions answered right, and for all of them once the quiz is passed. */
  explanation?: string;
}

export interface ScoreResult {
  correctCount: number;
  total: number;
  scorePct: number;
  passed: boolean;
  /** Topics of the questions answered wrong, sorted, without repeats (never the answers). */
  missedTopics: string[];
  results: QuestionResult[];
}

/** Scores an attempt: a question counts only when exactly the correct options are chosen. Unanswered counts as wrong. */
export function scoreAttempt(bank: readonly QuizQuestion[], drawn: readonly DrawnQuestion[], answers: Answers, passMarkPct: number): ScoreResult {
  const byId = new Map(bank.map((q) => [q.id, q]));
  let correctCount = 0;
  const missed = new Set<string>();
  const rows: { q: QuizQuestion; ok: boolean }[] = [];
  for (const d of drawn) {
    const q = byId.get(d.id);
    if (!q) throw new Error(`question ${d.id} is not in this quiz version`);
    const chosen = new Set(answers[q.id] ?? []);
    const key = new Set(q.correct);
    const ok = chosen.size === key.size && [...chosen].every((c) => key.has(c)) && (q.kind === 'multi' || chosen.size === 1);
    if (ok) correctCount++;
    else missed.add(q.topic);
    rows.push({ q, ok });
  }
  const total = drawn.length;
  const passed = total > 0 && correctCount * 100 >= passMarkPct * total;
  return {
    correctCount,
    total,
    scorePct: total ? Math.floor((correctCount * 100) / total) : 0,
    passed,
    missedTopics: [...missed].sort((a, b) => a.localeCompare(b)),
    results: rows.map(({ q, ok }) => ({
      questionId: q.id,
      topic: q.topic,
      prompt: q.prompt,
      correct: ok,
      ...(q.explanation && (ok || passed) ? { explanation: q.explanation } : {}),
    })),
  };
}

export interface AttemptLimits {
  attemptsPerDay: number;
  cooldownMinutes: number;
}

export interface PastAttempt {
  startedAt: Date;
  submittedAt: Date | null;
  passed: boolean | null;
}

export type AttemptGate = { ok: true } | { ok: false; reason: 'daily_limit' | 'cooldown'; nextAllowedAt: Date };

/**
 * May a person start another attempt at `now`? At most `attemptsPerDay` started in any 24 hours, and
 * after a failed attempt a wait of `cooldownMinutes` from its submission.
 */
export function attemptGate(past: readonly PastAttempt[], now: Date, limits: AttemptLimits): AttemptGate {
  const dayAgo = now.getTime() - 86_400_000;
  const recent = past.filter((a) => a.startedAt.getTime() > dayAgo).map((a) => a.startedAt.getTime()).sort((a, b) => a - b);
  let next = 0;
  let reason: 'daily_limit' | 'cooldown' | null = null;
  if (recent.length >= limits.attemptsPerDay) {
    // the oldest attempt that keeps the count at the limit must leave the 24-hour window
    next = recent[recent.length - limits.attemptsPerDay]! + 86_400_000;
    reason = 'daily_limit';
  }
  const lastFail = past
    .filter((a) => a.submittedAt && a.passed === false)
    .map((a) => a.submittedAt!.getTime())
    .sort((a, b) => b - a)[0];
  if (lastFail !== undefined && limits.cooldownMinutes > 0) {
    const until = lastFail + limits.cooldownMinutes * 60_000;
    if (until > now.getTime() && until > next) {
      next = until;
      reason = 'cooldown';
    }
  }
  return reason ? { ok: false, reason, nextAllowedAt: new Date(next) } : { ok: true };
}

/** Answers that reach the server this long after the time limit still count (a slow network, a phone asleep). */
export const SUBMIT_GRACE_SECONDS = 60;

/** True while an attempt started at `startedAt` is still open at `now`. */
export function attemptOpen(startedAt: Date, timeLimitMinutes: number, now: Date): boolean {
  return now.getTime() < startedAt.getTime() + timeLimitMinutes * 60_000;
}

/** Attempts left in the 24 hours before `now` (open attempts count once). */
export function attemptsLeft(past: readonly PastAttempt[], now: Date, attemptsPerDay: number): number {
  const dayAgo = now.getTime() - 86_400_000;
  return Math.max(0, attemptsPerDay - past.filter((a) => a.startedAt.getTime() > dayAgo).length);
}

/** What the quiz intro shows a person before they start (the server fills it; the quiz island shows it). */
export interface QuizIntro {
  quizId: string;
  title: string;
  groupName: string;
  questionCount: number;
  passMarkPct: number;
  attemptsPerDay: number;
  attemptsLeft: number;
  cooldownMinutes: number;
  timeLimitMinutes: number;
  /** An attempt still open: it is resumed, not counted again. */
  openAttempt: { attemptId: string; submitBy: string; answered: number } | null;
  /** When the quiz cannot be started now: from when it can, and why. */
  nextAllowed: { at: string; reason: 'daily_limit' | 'cooldown' } | null;
  /** When the quiz is not for this person now (already passed, cleared, suspended). */
  notNeeded: string | null;
}

/** A quiz attempt as the person taking it sees it (started, or resumed as it was left). */
export interface StartedAttempt {
  attemptId: string;
  quizId: string;
  version: number;
  title: string;
  groupName: string;
  passMarkPct: number;
  questions: DeliveredQuestion[];
  submitBy: string;
  timeLimitMinutes: number;
  /** Answers saved so far (an attempt that was open is returned as it was left). */
  answers: Answers;
  /** True when this is the attempt that was already open (it did not count again). */
  resumed: boolean;
}

/** A submitted attempt as the person sees it: the score, what was missed and the clearance's next step. */
export interface SubmittedAttempt {
  attemptId: string;
  scorePct: number;
  correctCount: number;
  total: number;
  passMarkPct: number;
  passed: boolean;
  missedTopics: string[];
  results: { questionId: string; topic: string; prompt: string; correct: boolean; explanation?: string }[];
  clearanceState: ClearanceState;
  nextStep: string;
}
