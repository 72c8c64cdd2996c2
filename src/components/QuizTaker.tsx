/** Taking a quiz: start an attempt, answer, submit; the server scores it and names the missed topics. */
import { useEffect, useRef, useState } from 'react';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';
import type { DeliveredQuestion } from '@lib/quiz-rules';
import type { QuizIntro, StartedAttempt, SubmittedAttempt } from '@lib/quiz-rules';

type Attempt = StartedAttempt;

type Result = Omit<SubmittedAttempt, 'attemptId' | 'clearanceState'> & { clearanceState: string };

export default function QuizTaker({ quizId, intro, timeZone, locale }: { quizId: string; intro: QuizIntro; timeZone: string; locale: string }) {
  const f = siteFormat(locale, timeZone);
  const when = (iso: string) => f.dayTime(new Date(iso));
  const clock = (iso: string) => f.time(new Date(iso));
  const [attempt, setAttempt] = useState<Attempt | null>(null);
  const [answers, setAnswers] = useState<Record<string, string[]>>({});
  const [result, setResult] = useState<Result | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const [saved, setSaved] = useState<'idle' | 'saving' | 'saved' | 'failed'>('idle');
  const pending = useRef<ReturnType<typeof setTimeout> | null>(null);
  // a save already on its way: the submission waits for it, so the save never arrives after the attempt is scored
  const inflight = useRef<Promise<unknown> | null>(null);
  // which change a save belongs to: only the latest change's save may show "saved"
  const saveCount = useRef(0);

  // an attempt left open (a reload, a second tab, a phone that slept) is picked up where it was left
  useEffect(() => {
    if (intro.openAttempt) void start();
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, []);

  async function start() {
    setBusy(true);
    setError(null);
    setResult(null);
    setAnswers({});
    try {
      const a = await api<Attempt>(`/api/quizzes/${quizId}/attempt`, { method: 'POST' });
      setAttempt(a);
      setAnswers(a.answers ?? {});
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
    // the answers go with the submission: a save still waiting would only be refused once the attempt is scored
    if (pending.current) clearTimeout(pending.current);
    pending.current = null;
    setBusy(true);
    setError(null);
    try {
      await inflight.current?.catch(() => undefined);
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

  function save(next: Record<string, string[]>) {
    if (!attempt) return;
    if (pending.current) clearTimeout(pending.current);
    // "saved" only once the latest answers are stored: an earlier save answering after a newer change must not say
    // so (a reload or a closed tab would lose the newer one), and saves go one after another, so an older set of
    // answers never arrives after a newer one
    const mine = ++saveCount.current;
    setSaved('saving');
    pending.current = setTimeout(() => {
      pending.current = null;
      const sent = (inflight.current ?? Promise.resolve())
        .catch(() => undefined)
        .then(() => api(`/api/quizzes/${quizId}/attempts/${attempt.attemptId}`, { method: 'PATCH', json: { answers: next } }))
        .then(() => {
          if (saveCount.current === mine) setSaved('saved');
        })
        .catch(() => {
          if (saveCount.current === mine) setSaved('failed');
        });
      inflight.current = sent;
      void sent.finally(() => {
        if (inflight.current === sent) inflight.current = null;
      });
    }, 250);
  }

  function choose(q: DeliveredQuestion, optionId: string, checked: boolean) {
    const current = answers[q.id] ?? [];
    const picked = q.kind === 'single' ? [optionId] : checked ? [...new Set([...current, optionId])] : current.filter((x) => x !== optionId);
    const next = { ...answers, [q.id]: picked };
    setAnswers(next);
    save(next);
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
        <section className="card space-y-3 p-5" aria-labelledby="intro-heading">
          <h1 id="intro-heading" className="text-2xl">{intro.title}</h1>
          <p>The quiz checks what you need to know before an instructor signs off your practical induction. Questions are drawn at random; your answers are scored on the server and you will see which topics you missed.</p>
          <dl className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm" aria-label="About this quiz">
            <dt className="text-charcoal-soft">Machine group</dt><dd>{intro.groupName}</dd>
            <dt className="text-charcoal-soft">Questions</dt><dd>{intro.questionCount}</dd>
            <dt className="text-charcoal-soft">Pass mark</dt><dd>{intro.passMarkPct} %</dd>
            <dt className="text-charcoal-soft">Time</dt><dd>{intro.timeLimitMinutes} minutes from the start; each answer is saved as you pick it, so a reload or a lost connection costs nothing</dd>
            <dt className="text-charcoal-soft">Attempts left today</dt><dd>{intro.attemptsLeft} of {intro.attemptsPerDay}</dd>
            <dt className="text-charcoal-soft">After a miss</dt><dd>{intro.cooldownMinutes > 0 ? `a ${intro.cooldownMinutes}-minute break before the next attempt` : 'you can try again at once'}</dd>
          </dl>
          {intro.notNeeded ? (
            <p className="notice notice-warn">{intro.notNeeded}</p>
          ) : intro.nextAllowed ? (
            <>
              <p className="notice notice-warn" id="quiz-wait">{intro.nextAllowed.reason === 'cooldown' ? 'Take a break after a missed attempt.' : 'You have used today’s attempts.'} The next attempt opens {when(intro.nextAllowed.at)}.</p>
              <button type="button" className="btn btn-primary" disabled aria-describedby="quiz-wait">Start the quiz</button>
            </>
          ) : (
            <button type="button" className="btn btn-primary" onClick={start} disabled={busy}>{busy ? 'Starting…' : intro.openAttempt ? 'Continue the quiz' : 'Start the quiz'}</button>
          )}
        </section>
      )}

      {attempt && (
        <form onSubmit={submit} className="space-y-4" aria-labelledby="quiz-heading">
          <div>
            <h1 id="quiz-heading" className="text-2xl">{attempt.title}</h1>
            <p className="hint">{attempt.groupName} · version {attempt.version} · pass mark {attempt.passMarkPct} % · submit by {clock(attempt.submitBy)} ({attempt.timeLimitMinutes} minutes)</p>
            {attempt.resumed && <p className="notice notice-ok mt-2" role="status">Welcome back: this is the attempt you started, with your answers so far. It did not count again.</p>}
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
            <span className="hint" role="status">{answered} of {attempt.questions.length} answered{saved === 'saving' ? ' · saving…' : saved === 'saved' ? ' · saved' : saved === 'failed' ? ' · not saved — check your connection; your answers are kept on this page' : ''}</span>
          </div>
        </form>
      )}
    </div>
  );
}
