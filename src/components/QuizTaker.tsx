/** Taking a quiz: start an attempt, answer, submit; the server scores it and names the missed topics. */
import { useState } from 'react';
import { api, ApiError } from './ui/api';
import type { DeliveredQuestion } from '../lib/quiz-rules';

interface Attempt {
  attemptId: string;
  quizId: string;
  version: number;
  title: string;
  groupName: string;
  passMarkPct: number;
  questions: DeliveredQuestion[];
  submitBy: string;
}

interface Result {
  scorePct: number;
  correctCount: number;
  total: number;
  passMarkPct: number;
  passed: boolean;
  missedTopics: string[];
  results: { questionId: string; topic: string; prompt: string; correct: boolean; explanation?: string }[];
  clearanceState: string;
  nextStep: string;
}

const when = (iso: string) =>
  new Intl.DateTimeFormat(undefined, { weekday: 'short', day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit' }).format(new Date(iso));

export default function QuizTaker({ quizId }: { quizId: string }) {
  const [attempt, setAttempt] = useState<Attempt | null>(null);
  const [answers, setAnswers] = useState<Record<string, string[]>>({});
  const [result, setResult] = useState<Result | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);

  async function start() {
    setBusy(true);
    setError(null);
    setResult(null);
    setAnswers({});
    try {
      setAttempt(await api<Attempt>(`/api/quizzes/${quizId}/attempt`, { method: 'POST' }));
    } catch (e) {
      if (e instanceof ApiError && e.code === 'attempt_limit' && e.fields?.nextAllowedAt) {
        setError(`${e.fields.reason === 'cooldown' ? 'Take a break after a missed attempt.' : 'You have used today’s attempts.'} You can try again from ${when(e.fields.nextAllowedAt)}.`);
      } else {
        setError(e instanceof ApiError ? e.message : 'Could not start the quiz.');
      }
    } finally {
      setBusy(false);
    }
  }

  async function submit(ev: React.FormEvent) {
    ev.preventDefault();
    if (!attempt) return;
    setBusy(true);
    setError(null);
    try {
      const r = await api<Result>(`/api/quizzes/${quizId}/attempts/${attempt.attemptId}`, { method: 'POST', json: { answers } });
      setResult(r);
      setAttempt(null);
      window.scrollTo({ top: 0 });
    } catch (e) {
      setError(e instanceof ApiError ? e.message : 'Could not submit your answers.');
    } finally {
      setBusy(false);
    }
  }

  function choose(q: DeliveredQuestion, optionId: string, checked: boolean) {
    setAnswers((a) => {
      const current = a[q.id] ?? [];
      const next = q.kind === 'single' ? [optionId] : checked ? [...new Set([...current, optionId])] : current.filter((x) => x !== optionId);
      return { ...a, [q.id]: next };
    });
  }

  const answered = attempt ? attempt.questions.filter((q) => (answers[q.id] ?? []).length > 0).length : 0;

  return (
    <div className="space-y-5">
      {error && <p className="notice notice-stop" role="alert">{error}</p>}

      {result && (
        <section className="card space-y-4 p-5" aria-labelledby="result-heading">
          <h1 id="result-heading" className="text-2xl">{result.passed ? 'Passed' : 'Not passed this time'}</h1>
          <p className={`notice ${result.passed ? 'notice-ok' : 'notice-warn'}`} role="status">
            You scored <strong>{result.scorePct} %</strong> ({result.correctCount} of {result.total}); the pass mark is {result.passMarkPct} %.
          </p>
          {result.missedTopics.length > 0 && (
            <div>
              <h2 className="text-lg">Topics to read over</h2>
              <ul className="list-disc pl-5" aria-label="Missed topics">
                {result.missedTopics.map((t) => <li key={t}>{t}</li>)}
              </ul>
            </div>
          )}
          <p><strong>Next step:</strong> {result.nextStep}</p>
          <details>
            <summary className="cursor-pointer font-semibold">Your questions</summary>
            <ol className="mt-2 space-y-2">
              {result.results.map((r) => (
                <li key={r.questionId} className="text-sm">
                  <span aria-hidden="true">{r.correct ? '✓ ' : '✗ '}</span>
                  <span className="sr-only-focusable">{r.correct ? 'Right: ' : 'Missed: '}</span>
                  {r.prompt}
                  {r.explanation && <p className="hint ml-5">{r.explanation}</p>}
                </li>
              ))}
            </ol>
          </details>
          <div className="flex flex-wrap gap-2">
            <a className="btn btn-primary" href="/clearances">Back to Clearances</a>
            {!result.passed && <button type="button" className="btn btn-quiet" onClick={start} disabled={busy}>Try again</button>}
          </div>
        </section>
      )}

      {!attempt && !result && (
        <section className="card space-y-3 p-5">
          <h1 className="text-2xl">Safety quiz</h1>
          <p>The quiz checks what you need to know before an instructor signs off your practical induction. Questions are drawn at random; your answers are scored on the server and you will see which topics you missed.</p>
          <p className="hint">Each start counts as an attempt. After a missed attempt there is a short wait before the next one.</p>
          <button type="button" className="btn btn-primary" onClick={start} disabled={busy}>{busy ? 'Starting…' : 'Start the quiz'}</button>
        </section>
      )}

      {attempt && (
        <form onSubmit={submit} className="space-y-4" aria-labelledby="quiz-heading">
          <div>
            <h1 id="quiz-heading" className="text-2xl">{attempt.title}</h1>
            <p className="hint">{attempt.groupName} · version {attempt.version} · pass mark {attempt.passMarkPct} % · submit by {when(attempt.submitBy)}</p>
          </div>
          {attempt.questions.map((q, i) => (
            <fieldset key={q.id} className="card p-4" data-question={q.id}>
              <legend className="px-1 font-semibold">
                {i + 1}. {q.prompt}
              </legend>
              <p className="hint mb-2">{q.kind === 'multi' ? 'Choose all that apply.' : 'Choose one.'}</p>
              <div className="space-y-2">
                {q.options.map((o) => (
                  <label key={o.id} className="flex items-start gap-2">
                    <input
                      type={q.kind === 'multi' ? 'checkbox' : 'radio'}
                      name={`q-${q.id}`}
                      value={o.id}
                      className="mt-1 h-4 w-4 accent-[var(--color-ember)]"
                      checked={(answers[q.id] ?? []).includes(o.id)}
                      onChange={(e) => choose(q, o.id, e.currentTarget.checked)}
                    />
                    <span>{o.text}</span>
                  </label>
                ))}
              </div>
            </fieldset>
          ))}
          <div className="flex flex-wrap items-center gap-3">
            <button type="submit" className="btn btn-primary" disabled={busy}>{busy ? 'Submitting…' : 'Submit answers'}</button>
            <span className="hint" role="status">{answered} of {attempt.questions.length} answered</span>
          </div>
        </form>
      )}
    </div>
  );
}
