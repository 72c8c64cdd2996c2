/**
 * Quizzes (instructor): the list of quizzes and the editor of one — settings, the question bank with
 * single-choice and multi-select questions, explanations — validated with the same zod schema the
 * server uses, a preview as a member sees it, save as a draft version and publish (which freezes it).
 */
import { useCallback, useEffect, useState } from 'react';
import { useFieldArray, useForm, useWatch, type Control, type UseFormRegister, type UseFormSetValue, type FieldErrors } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from '@lib/zod';
import { quizDraftSchema, type QuizDraft } from '@lib/quiz-rules';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

type FormIn = z.input<typeof quizDraftSchema>;

interface Group { id: string; name: string; machines: { name: string }[] }
interface QuizSummary {
  id: string; groupId: string; groupName: string; title: string;
  published: { version: number; publishedAt: string; questionCount: number } | null;
  draft: { version: number; updatedAt: string } | null;
  attempts: number;
}
interface EditorData {
  id: string; groupId: string; groupName: string; title: string;
  current: (QuizDraft & { version: number; status: string }) | null;
  history: { version: number; status: string; publishedAt: string | null; questionCount: number }[];
}

const LETTERS = 'abcdefgh';
const newQuestionId = () => `q${Date.now().toString(36)}${Math.floor(Math.random() * 1296).toString(36)}`;
const blankQuestion = () => ({
  id: newQuestionId(), topic: '', prompt: '', kind: 'single' as const,
  options: [{ id: 'a', text: '' }, { id: 'b', text: '' }], correct: [] as string[], explanation: '',
});
const blankDraft = (): FormIn => ({ title: '', passMarkPct: 80, questionsPerAttempt: 1, attemptsPerDay: 3, cooldownMinutes: 10, timeLimitMinutes: 30, questions: [blankQuestion()] });

/** The editor's own address: /quizzes?quiz=<id>, or /quizzes?new=<groupId> for a new quiz. */
function editorFromUrl(): { id: string | null; groupId: string } | null {
  if (typeof window === 'undefined') return null;
  const q = new URLSearchParams(window.location.search);
  const id = q.get('quiz');
  if (id && /^[0-9a-f-]{36}$/i.test(id)) return { id, groupId: '' };
  const g = q.get('new');
  if (g && /^[0-9a-f-]{36}$/i.test(g)) return { id: null, groupId: g };
  return null;
}
function setAddress(e: { id: string | null; groupId: string } | null, replace = false) {
  const url = e ? (e.id ? `/quizzes?quiz=${e.id}` : `/quizzes?new=${e.groupId}`) : '/quizzes';
  if (url === `${window.location.pathname}${window.location.search}`) return;
  if (replace) window.history.replaceState(null, '', url);
  else window.history.pushState(null, '', url);
}

/** Dates in the site's locale and zone (props from the server), never the browser's. */
export default function QuizEditor({ timeZone, locale }: { timeZone: string; locale: string }) {
  const fmt = (iso: string) => siteFormat(locale, timeZone).date(new Date(iso));
  const [quizzes, setQuizzes] = useState<QuizSummary[] | null>(null);
  const [groups, setGroups] = useState<Group[]>([]);
  const [editing, setEditingState] = useState<{ id: string | null; groupId: string } | null>(null);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const setEditing = (e: { id: string | null; groupId: string } | null) => {
    setEditingState(e);
    setAddress(e);
  };
  useEffect(() => {
    setEditingState(editorFromUrl());
    const back = () => setEditingState(editorFromUrl());
    window.addEventListener('popstate', back);
    return () => window.removeEventListener('popstate', back);
  }, []);

  const load = useCallback(async () => {
    try {
      const [q, g] = await Promise.all([api<{ quizzes: QuizSummary[] }>('/api/quizzes'), api<{ groups: Group[] }>('/api/machine-groups')]);
      setQuizzes(q.quizzes);
      setGroups(g.groups);
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load quizzes.' });
    }
  }, []);
  useEffect(() => void load(), [load]);

  if (editing) {
    return (
      <Editor
        fmt={fmt}
        quizId={editing.id}
        groupId={editing.groupId}
        groups={groups}
        onCreated={(newId) => setAddress({ id: newId, groupId: editing.groupId }, true)}
        onClose={(text) => {
          setEditing(null);
          if (text) setMessage({ tone: 'ok', text });
          void load();
        }}
      />
    );
  }

  return (
    <div className="space-y-5">
      {message && <p className={`notice notice-${message.tone}`} role={message.tone === 'stop' ? 'alert' : 'status'}>{message.text}</p>}
      {!quizzes ? <p className="hint">Loading…</p> : (
        <div className="card overflow-x-auto p-2">
          <table className="table">
            <thead><tr><th>Quiz</th><th>Machine group</th><th>Published</th><th>Draft</th><th>Attempts</th><th><span className="sr-only-focusable">Actions</span></th></tr></thead>
            <tbody>
              {quizzes.length === 0 && <tr><td colSpan={6}>No quizzes yet.</td></tr>}
              {quizzes.map((q) => (
                <tr key={q.id} data-quiz={q.id}>
                  <td className="font-semibold">{q.title}</td>
                  <td>{q.groupName}</td>
                  <td>{q.published ? `v${q.published.version} · ${q.published.questionCount} questions · ${fmt(q.published.publishedAt)}` : '—'}</td>
                  <td>{q.draft ? `v${q.draft.version} saved ${fmt(q.draft.updatedAt)} (not published)` : '—'}</td>
                  <td>{q.attempts}</td>
                  <td><a className="btn btn-quiet" href={`/quizzes?quiz=${q.id}`} onClick={(ev) => { ev.preventDefault(); setEditing({ id: q.id, groupId: q.groupId }); }}>Edit {q.title}</a></td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      <NewQuiz groups={groups.filter((g) => !quizzes?.some((q) => q.groupId === g.id))} onStart={(groupId) => setEditing({ id: null, groupId })} />
    </div>
  );
}

function NewQuiz({ groups, onStart }: { groups: Group[]; onStart: (groupId: string) => void }) {
  const [groupId, setGroupId] = useState('');
  if (groups.length === 0) return <p className="hint">Every machine group has its quiz; edit one above to make a new version.</p>;
  return (
    <section className="card flex flex-wrap items-end gap-3 p-4" aria-label="New quiz">
      <label className="field">
        <span>Machine group for a new quiz</span>
        <select className="input" value={groupId} onChange={(e) => setGroupId(e.target.value)}>
          <option value="">Choose…</option>
          {groups.map((g) => <option key={g.id} value={g.id}>{g.name}</option>)}
        </select>
      </label>
      <button type="button" className="btn btn-primary" disabled={!groupId} onClick={() => onStart(groupId)}>New quiz</button>
    </section>
  );
}

function Editor({ quizId, groupId, groups, fmt, onClose, onCreated }: { quizId: string | null; groupId: string; groups: Group[]; fmt: (iso: string) => string; onClose: (message?: string) => void; onCreated: (id: string) => void }) {
  const [id, setId] = useState<string | null>(quizId);
  const [removed, setRemoved] = useState<{ index: number; value: FormIn['questions'][number]; label: string } | null>(null);
  const [confirmDiscard, setConfirmDiscard] = useState(false);
  const [loadCount, setLoadCount] = useState(0);
  const [data, setData] = useState<EditorData | null>(null);
  const [tab, setTab] = useState<'edit' | 'preview'>('edit');
  const [status, setStatus] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);
  const form = useForm<FormIn, unknown, QuizDraft>({ resolver: zodResolver(quizDraftSchema), defaultValues: blankDraft(), mode: 'onBlur' });
  const { register, control, handleSubmit, reset, setValue, setError, formState: { errors } } = form;
  const questions = useFieldArray({ control, name: 'questions', keyName: 'key' });

  useEffect(() => {
    if (!id) return;
    void api<EditorData>(`/api/quizzes/${id}`).then((d) => {
      setData(d);
      if (d.current) {
        reset({
          title: d.current.title, passMarkPct: d.current.passMarkPct, questionsPerAttempt: d.current.questionsPerAttempt,
          attemptsPerDay: d.current.attemptsPerDay, cooldownMinutes: d.current.cooldownMinutes, timeLimitMinutes: d.current.timeLimitMinutes ?? 30,
          questions: d.current.questions.map((q) => ({ ...q, explanation: q.explanation ?? '' })),
        });
      }
    }).catch(() => setStatus({ tone: 'stop', text: 'Could not load this quiz; it may not exist. Go back to the list.' }));
  }, [id, reset, loadCount]);

  /** The version list after a save, without touching what is being edited. */
  async function refreshHistory(quiz: string) {
    const d = await api<EditorData>(`/api/quizzes/${quiz}`);
    setData((old) => (old ? { ...old, history: d.history, current: old.current ? { ...old.current, status: d.current?.status ?? old.current.status, version: d.current?.version ?? old.current.version } : d.current } : d));
  }

  function removeQuestion(i: number) {
    const value = form.getValues(`questions.${i}`);
    questions.remove(i);
    setRemoved({ index: i, value, label: value?.prompt ? `“${value.prompt.slice(0, 60)}${value.prompt.length > 60 ? '…' : ''}”` : `question ${i + 1}` });
  }

  async function discard() {
    if (!id) return;
    setBusy(true);
    try {
      const r = await api<{ discardedVersion: number }>(`/api/quizzes/${id}/draft`, { method: 'DELETE' });
      setConfirmDiscard(false);
      setRemoved(null);
      setStatus({ tone: 'ok', text: `Draft version ${r.discardedVersion} is discarded; the editor shows the published version again.` });
      setLoadCount((n) => n + 1);
    } catch (e) {
      setStatus({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not discard the draft.' });
    } finally {
      setBusy(false);
    }
  }

  const groupName = data?.groupName ?? groups.find((g) => g.id === groupId)?.name ?? '';

  async function save(draft: QuizDraft, andPublish: boolean) {
    setBusy(true);
    setStatus(null);
    const clean = { ...draft, questions: draft.questions.map((q) => (q.explanation ? q : { ...q, explanation: undefined })) };
    try {
      let quiz = id;
      let version: number;
      if (!quiz) {
        const r = await api<{ id: string; version: number }>('/api/quizzes', { method: 'POST', json: { groupId, draft: clean } });
        quiz = r.id;
        version = r.version;
        setId(quiz);
        onCreated(quiz);
      } else {
        version = (await api<{ version: number }>(`/api/quizzes/${quiz}/draft`, { method: 'PUT', json: clean })).version;
      }
      if (andPublish) {
        const p = await api<{ version: number }>(`/api/quizzes/${quiz}/publish`, { method: 'POST' });
        onClose(`Published version ${p.version} of “${draft.title}”. New attempts use it; earlier attempts keep the version they took.`);
        return;
      }
      setStatus({ tone: 'ok', text: `Saved as draft version ${version}. Members still get the published version until you publish.` });
      await refreshHistory(quiz).catch(() => undefined);
    } catch (e) {
      if (e instanceof ApiError && e.fields) {
        for (const [path, msg] of Object.entries(e.fields)) setError(path.replace(/^draft\./, '') as never, { message: msg });
      }
      setStatus({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not save the quiz.' });
    } finally {
      setBusy(false);
    }
  }

  const values = useWatch({ control }) as FormIn;
  const bankSize = values.questions?.length ?? 0;

  return (
    <div className="space-y-5">
      <div className="flex flex-wrap items-center justify-between gap-3">
        <div>
          <h2 className="text-xl">{id ? 'Edit quiz' : 'New quiz'} · {groupName}</h2>
          {data?.current && (
            <p className="hint">
              Editing {data.current.status === 'draft' ? `draft version ${data.current.version}` : `a new draft after published version ${data.current.version}`}.
              Published versions are frozen; saving creates or updates the draft.
            </p>
          )}
        </div>
        <div className="flex flex-wrap gap-2">
          {id && data?.current?.status === 'draft' && data.history.some((h) => h.status === 'published') && (
            confirmDiscard ? (
              <span className="flex flex-wrap items-center gap-2">
                <span className="text-sm">Throw away draft version {data.current.version}? The published version stays.</span>
                <button type="button" className="btn btn-primary" disabled={busy} onClick={discard}>Yes, discard the draft</button>
                <button type="button" className="btn btn-quiet" onClick={() => setConfirmDiscard(false)}>Keep it</button>
              </span>
            ) : (
              <button type="button" className="btn btn-quiet" onClick={() => setConfirmDiscard(true)}>Discard draft…</button>
            )
          )}
          <button type="button" className="btn btn-quiet" onClick={() => onClose()}>Back to the list</button>
        </div>
      </div>
      {status && <p className={`notice notice-${status.tone}`} role={status.tone === 'stop' ? 'alert' : 'status'}>{status.text}</p>}
      <div role="tablist" aria-label="Editor view" className="flex gap-2">
        <button type="button" role="tab" aria-selected={tab === 'edit'} className={`btn ${tab === 'edit' ? 'btn-primary' : 'btn-quiet'}`} onClick={() => setTab('edit')}>Edit</button>
        <button type="button" role="tab" aria-selected={tab === 'preview'} className={`btn ${tab === 'preview' ? 'btn-primary' : 'btn-quiet'}`} onClick={() => setTab('preview')}>Preview</button>
      </div>

      {tab === 'preview' ? <Preview values={values} /> : (
        <form className="space-y-5" noValidate onSubmit={handleSubmit((d) => save(d, false))}>
          <section className="card grid gap-4 p-4 sm:grid-cols-2 lg:grid-cols-3">
            <Field label="Title" error={errors.title?.message} className="sm:col-span-2 lg:col-span-3">
              <input className="input" {...register('title')} />
            </Field>
            <Field label="Pass mark (%)" error={errors.passMarkPct?.message}>
              <input className="input" type="number" inputMode="numeric" {...register('passMarkPct')} />
            </Field>
            <Field label={`Questions drawn per attempt (bank: ${bankSize})`} error={errors.questionsPerAttempt?.message}>
              <input className="input" type="number" inputMode="numeric" {...register('questionsPerAttempt')} />
            </Field>
            <Field label="Attempts allowed per 24 hours" error={errors.attemptsPerDay?.message}>
              <input className="input" type="number" inputMode="numeric" {...register('attemptsPerDay')} />
            </Field>
            <Field label="Wait after a missed attempt (minutes)" error={errors.cooldownMinutes?.message}>
              <input className="input" type="number" inputMode="numeric" {...register('cooldownMinutes')} />
            </Field>
            <Field label="Time limit of an attempt (minutes)" error={errors.timeLimitMinutes?.message}>
              <input className="input" type="number" inputMode="numeric" {...register('timeLimitMinutes')} />
            </Field>
          </section>
          {errors.questions?.message && <p className="notice notice-stop" role="alert">{errors.questions.message}</p>}
          {removed && (
            <p className="notice notice-warn flex flex-wrap items-center gap-3" role="status">
              Removed {removed.label} from the draft (nothing is saved until you save).
              <button type="button" className="btn btn-quiet" onClick={() => { questions.insert(removed.index, removed.value); setRemoved(null); }}>Undo</button>
            </p>
          )}
          <ol className="space-y-4">
            {questions.fields.map((f, i) => (
              <li key={f.key}>
                <QuestionEditor index={i} control={control} register={register} setValue={setValue} errors={errors} onRemove={() => removeQuestion(i)} canRemove={questions.fields.length > 1} />
              </li>
            ))}
          </ol>
          <div className="flex flex-wrap gap-2">
            <button type="button" className="btn btn-quiet" onClick={() => questions.append(blankQuestion())}>Add a question</button>
            <span className="flex-1" />
            <button type="submit" className="btn btn-quiet" disabled={busy}>Save draft</button>
            <button type="button" className="btn btn-primary" disabled={busy} onClick={handleSubmit((d) => save(d, true))}>Save and publish</button>
          </div>
          {Object.keys(errors).length > 0 && <p className="notice notice-stop" role="alert">Some fields need attention; they are marked above.</p>}
        </form>
      )}
      {data && data.history.length > 0 && (
        <section className="card p-4">
          <h3 className="text-lg">Versions</h3>
          <ul className="text-sm">
            {data.history.map((h) => (
              <li key={h.version} data-version-status={h.status}>v{h.version} · {h.status === 'draft' ? 'draft (saved, not published)' : h.status}{h.publishedAt ? ` · published ${fmt(h.publishedAt)}` : ''} · {h.questionCount} questions</li>
            ))}
          </ul>
        </section>
      )}
    </div>
  );
}

function Field({ label, error, className = '', children }: { label: string; error?: string; className?: string; children: React.ReactNode }) {
  return (
    <label className={`field ${className}`}>
      <span>{label}</span>
      {children}
      {error && <span className="text-sm font-normal text-stop">{error}</span>}
    </label>
  );
}

function QuestionEditor({ index, control, register, setValue, errors, onRemove, canRemove }: {
  index: number; control: Control<FormIn, unknown, QuizDraft>; register: UseFormRegister<FormIn>; setValue: UseFormSetValue<FormIn>;
  errors: FieldErrors<FormIn>; onRemove: () => void; canRemove: boolean;
}) {
  const options = useFieldArray({ control, name: `questions.${index}.options`, keyName: 'key' });
  const kind = useWatch({ control, name: `questions.${index}.kind` });
  const correct = (useWatch({ control, name: `questions.${index}.correct` }) ?? []) as string[];
  const optionValues = (useWatch({ control, name: `questions.${index}.options` }) ?? []) as { id: string }[];
  const e = errors.questions?.[index];
  const n = index + 1;

  function toggle(optionId: string, on: boolean) {
    const next = kind === 'single' ? (on ? [optionId] : []) : on ? [...new Set([...correct, optionId])] : correct.filter((c) => c !== optionId);
    setValue(`questions.${index}.correct`, next, { shouldValidate: true, shouldDirty: true });
  }

  return (
    <fieldset className="card space-y-3 p-4">
      <legend className="px-1 font-semibold">Question {n}</legend>
      <div className="grid gap-3 sm:grid-cols-[1fr_auto]">
        <Field label={`Question ${n} topic`} error={e?.topic?.message}><input className="input" {...register(`questions.${index}.topic`)} /></Field>
        <Field label={`Question ${n} kind`}>
          <select className="input" {...register(`questions.${index}.kind`, { onChange: () => setValue(`questions.${index}.correct`, []) })}>
            <option value="single">Single choice</option>
            <option value="multi">Multi-select</option>
          </select>
        </Field>
      </div>
      <Field label={`Question ${n} text`} error={e?.prompt?.message}><textarea className="input" rows={2} {...register(`questions.${index}.prompt`)} /></Field>
      <div className="space-y-2">
        <p className="text-sm font-semibold">Options — tick the correct {kind === 'multi' ? 'ones' : 'one'}</p>
        {options.fields.map((o, j) => {
          const oid = optionValues[j]?.id ?? (o as unknown as { id: string }).id;
          return (
            <div key={o.key} className="flex items-start gap-2">
              <input
                type={kind === 'multi' ? 'checkbox' : 'radio'}
                className="mt-3 h-4 w-4"
                aria-label={`Question ${n} option ${j + 1} is correct`}
                checked={correct.includes(oid)}
                onChange={(ev) => toggle(oid, ev.currentTarget.checked)}
                name={`correct-${index}`}
              />
              <div className="flex-1">
                <input className="input w-full" aria-label={`Question ${n} option ${j + 1}`} {...register(`questions.${index}.options.${j}.text`)} />
                {e?.options?.[j]?.text?.message && <span className="text-sm text-stop">{e.options[j]!.text!.message}</span>}
              </div>
              {options.fields.length > 2 && (
                <button type="button" className="btn btn-quiet" aria-label={`Remove option ${j + 1} of question ${n}`} onClick={() => {
                  setValue(`questions.${index}.correct`, correct.filter((c) => c !== oid));
                  options.remove(j);
                }}>✕</button>
              )}
            </div>
          );
        })}
        {e?.options?.message && <p className="text-sm text-stop">{e.options.message}</p>}
        {e?.correct?.message && <p className="text-sm text-stop">{e.correct.message}</p>}
        {options.fields.length < 8 && (
          <button type="button" className="btn btn-quiet" onClick={() => {
            const used = new Set(optionValues.map((v) => v.id));
            options.append({ id: [...LETTERS].find((l) => !used.has(l)) ?? `o${Date.now()}`, text: '' });
          }}>Add an option to question {n}</button>
        )}
      </div>
      <Field label={`Question ${n} explanation (shown after submission; optional)`} error={e?.explanation?.message}>
        <textarea className="input" rows={2} {...register(`questions.${index}.explanation`)} />
      </Field>
      {canRemove && <button type="button" className="btn btn-quiet" onClick={onRemove}>Remove question {n}</button>}
    </fieldset>
  );
}

function Preview({ values }: { values: FormIn }) {
  return (
    <section className="space-y-4" aria-label="Preview">
      <p className="notice notice-warn">Preview: this is what a member sees (order is shuffled for each attempt, and only {String(values.questionsPerAttempt)} of the {values.questions?.length ?? 0} questions are drawn). Nothing is recorded.</p>
      <h2 className="text-2xl">{values.title || 'Untitled quiz'}</h2>
      {(values.questions ?? []).map((q, i) => (
        <fieldset key={q?.id ?? i} className="card p-4">
          <legend className="px-1 font-semibold">{i + 1}. {q?.prompt || '(no text yet)'}</legend>
          <p className="hint mb-2">{q?.kind === 'multi' ? 'Choose all that apply.' : 'Choose one.'}</p>
          {(q?.options ?? []).map((o) => (
            <label key={o?.id} className="flex items-start gap-2">
              <input type={q?.kind === 'multi' ? 'checkbox' : 'radio'} name={`preview-${i}`} className="mt-1 h-4 w-4" />
              <span>{o?.text || '(empty option)'}</span>
            </label>
          ))}
        </fieldset>
      ))}
    </section>
  );
}
