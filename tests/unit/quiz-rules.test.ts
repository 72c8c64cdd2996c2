/** Quiz banks, drawing, server-side scoring and attempt limits. */
import { describe, expect, it } from 'vitest';
import { attemptGate, deliver, drawQuestions, quizDraftSchema, quizQuestionSchema, scoreAttempt, type QuizQuestion } from '../../src/lib/quiz-rules';

const bank: QuizQuestion[] = [
  { id: 'q1', topic: 'Fire watch', prompt: 'Stay with the job?', kind: 'single', options: [{ id: 'a', text: 'Yes' }, { id: 'b', text: 'No' }], correct: ['a'], explanation: 'Always.' },
  { id: 'q2', topic: 'Banned materials', prompt: 'Which are blocked?', kind: 'multi', options: [{ id: 'a', text: 'PVC' }, { id: 'b', text: 'Plywood' }, { id: 'c', text: 'PTFE' }], correct: ['a', 'c'] },
  { id: 'q3', topic: 'Extraction', prompt: 'Extractor on?', kind: 'single', options: [{ id: 'a', text: 'Before' }, { id: 'b', text: 'After' }], correct: ['a'] },
  { id: 'q4', topic: 'Fire watch', prompt: 'Lid on fire?', kind: 'single', options: [{ id: 'a', text: 'Open' }, { id: 'b', text: 'Keep closed' }], correct: ['b'] },
];
const all = bank.map((q) => ({ id: q.id, optionOrder: q.options.map((o) => o.id) }));

/** A seeded generator, so draws are repeatable. */
function rng(seed: number) {
  let s = seed >>> 0;
  return () => {
    s = (s * 1664525 + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

describe('scoring', () => {
  it('counts a question only when exactly the correct options are chosen', () => {
    const r = scoreAttempt(bank, all, { q1: ['a'], q2: ['a', 'c'], q3: ['a'], q4: ['b'] }, 80);
    expect(r).toMatchObject({ correctCount: 4, total: 4, scorePct: 100, passed: true, missedTopics: [] });
    const partial = scoreAttempt(bank, all, { q1: ['a'], q2: ['a'], q3: ['a'], q4: ['b'] }, 80);
    expect(partial.correctCount).toBe(3);
    const extra = scoreAttempt(bank, all, { q1: ['a'], q2: ['a', 'b', 'c'], q3: ['a'], q4: ['b'] }, 80);
    expect(extra.correctCount).toBe(3);
  });

  it('treats two picks on a single-choice question as wrong, and unanswered as wrong', () => {
    const r = scoreAttempt(bank, all, { q1: ['a', 'b'] }, 50);
    expect(r.correctCount).toBe(0);
    expect(r.passed).toBe(false);
  });

  it('names missed topics once each, sorted, and never the correct options', () => {
    const r = scoreAttempt(bank, all, { q1: ['b'], q2: ['a', 'c'], q3: ['b'], q4: ['a'] }, 80);
    expect(r.missedTopics).toEqual(['Extraction', 'Fire watch']);
    expect(JSON.stringify(r)).not.toContain('"correct":["');
  });

  it('passes at exactly the pass mark, without rounding up', () => {
    // 3 of 4 = 75 %
    expect(scoreAttempt(bank, all, { q1: ['a'], q2: ['a', 'c'], q3: ['a'] }, 75).passed).toBe(true);
    expect(scoreAttempt(bank, all, { q1: ['a'], q2: ['a', 'c'], q3: ['a'] }, 76).passed).toBe(false);
    // 2 of 3 = 66.67 %: a 67 % mark is not met
    expect(scoreAttempt(bank, all.slice(0, 3), { q1: ['a'], q2: ['a', 'c'] }, 67).passed).toBe(false);
    expect(scoreAttempt(bank, all.slice(0, 3), { q1: ['a'], q2: ['a', 'c'] }, 66).passed).toBe(true);
  });

  it('shows explanations only for right answers on a fail, and for all on a pass', () => {
    const fail = scoreAttempt(bank, all, { q1: ['b'] }, 80);
    expect(fail.results.find((x) => x.questionId === 'q1')?.explanation).toBeUndefined();
    const pass = scoreAttempt(bank, all, { q1: ['a'], q2: ['a', 'c'], q3: ['a'], q4: ['b'] }, 80);
    expect(pass.results.find((x) => x.questionId === 'q1')?.explanation).toBe('Always.');
  });
});

describe('drawing', () => {
  it('draws the asked number of distinct questions with every option kept, shuffled', () => {
    const d = drawQuestions(bank, 3, rng(7));
    expect(d).toHaveLength(3);
    expect(new Set(d.map((x) => x.id)).size).toBe(3);
    for (const x of d) {
      const q = bank.find((b) => b.id === x.id)!;
      expect([...x.optionOrder].sort()).toEqual(q.options.map((o) => o.id).sort());
    }
  });

  it('varies the order between draws', () => {
    const orders = new Set(Array.from({ length: 20 }, (_, i) => drawQuestions(bank, 4, rng(i + 1)).map((x) => x.id).join()));
    expect(orders.size).toBeGreaterThan(3);
  });

  it('delivers prompts and options without the answer key or explanations', () => {
    const out = deliver(bank, drawQuestions(bank, 4, rng(3)));
    for (const q of out) {
      expect(Object.keys(q).sort()).toEqual(['id', 'kind', 'options', 'prompt', 'topic']);
      for (const o of q.options) expect(Object.keys(o).sort()).toEqual(['id', 'text']);
    }
  });
});

describe('the bank schema', () => {
  it('refuses a single-choice question with two correct options, or a correct id that is not an option', () => {
    expect(quizQuestionSchema.safeParse({ ...bank[0], correct: ['a', 'b'] }).success).toBe(false);
    expect(quizQuestionSchema.safeParse({ ...bank[0], correct: ['z'] }).success).toBe(false);
    expect(quizQuestionSchema.safeParse(bank[1]).success).toBe(true);
  });

  it('refuses drawing more questions than the bank holds', () => {
    const base = { title: 'Test quiz', passMarkPct: 80, attemptsPerDay: 3, cooldownMinutes: 10, questions: bank };
    expect(quizDraftSchema.safeParse({ ...base, questionsPerAttempt: 4 }).success).toBe(true);
    const r = quizDraftSchema.safeParse({ ...base, questionsPerAttempt: 5 });
    expect(r.success).toBe(false);
    expect(r.error?.issues[0]?.path).toEqual(['questionsPerAttempt']);
  });
});

describe('attempt limits', () => {
  const limits = { attemptsPerDay: 3, cooldownMinutes: 10 };
  const t = (min: number) => new Date(Date.UTC(2026, 11, 2, 0, 0) + min * 60_000);

  it('allows the first attempt', () => {
    expect(attemptGate([], t(0), limits)).toEqual({ ok: true });
  });

  it('makes a person wait the cooldown after a failed attempt', () => {
    const past = [{ startedAt: t(0), submittedAt: t(5), passed: false }];
    expect(attemptGate(past, t(14), limits)).toEqual({ ok: false, reason: 'cooldown', nextAllowedAt: t(15) });
    expect(attemptGate(past, t(15), limits)).toEqual({ ok: true });
  });

  it('caps attempts per rolling 24 hours and names when the next is allowed', () => {
    const past = [0, 60, 120].map((m) => ({ startedAt: t(m), submittedAt: t(m + 5), passed: false }));
    expect(attemptGate(past, t(200), limits)).toEqual({ ok: false, reason: 'daily_limit', nextAllowedAt: t(24 * 60) });
    expect(attemptGate(past, t(24 * 60), limits)).toEqual({ ok: true });
  });

  it('counts started but unsubmitted attempts too', () => {
    const past = [0, 1, 2].map((m) => ({ startedAt: t(m), submittedAt: null, passed: null }));
    expect(attemptGate(past, t(30), limits).ok).toBe(false);
  });

  it('has no cooldown when it is set to zero', () => {
    const past = [{ startedAt: t(0), submittedAt: t(1), passed: false }];
    expect(attemptGate(past, t(1), { attemptsPerDay: 3, cooldownMinutes: 0 })).toEqual({ ok: true });
  });
});
