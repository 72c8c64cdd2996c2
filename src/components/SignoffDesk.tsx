/**
 * Sign-offs (instructor): induction sessions and their rosters; the walk-in path — the queue of people awaiting
 * a practical sign-off (oldest first, filter by group) with the group's checklist; and suspending or reinstating
 * a clearance. A sign-off updates the clearance table below at once.
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import { api, ApiError } from './ui/api';
import InductionRoster from './InductionRoster';
import { siteFormat } from '@lib/format';

interface Group { id: string; name: string; checklist: string[] }
interface QueueEntry { personId: string; personName: string; personEmail: string; groupId: string; groupName: string; quizPassedAt: string | null; checklist: string[] }
interface ClearanceRow { id: string; personId: string; personName: string; personEmail: string; groupName: string; state: string; level: string; expiresAt: string | null; expiresOn: string | null; suspendedReason: string | null }
interface MachineOpt { id: string; name: string; groupId: string | null }


export default function SignoffDesk({ selfId, groups: groupList, machines, timeZone, locale }: { selfId: string; groups: { id: string; name: string }[]; machines: MachineOpt[]; timeZone: string; locale: string }) {
  const fmt = (iso: string | null) => (iso ? siteFormat(locale, timeZone).date(new Date(iso)) : '—');
  const [groups, setGroups] = useState<Group[]>([]);
  const [version, setVersion] = useState(0);
  const live = useRef<HTMLParagraphElement>(null);
  const [groupId, setGroupId] = useState('');
  const [queue, setQueue] = useState<QueueEntry[] | null>(null);
  const [open, setOpen] = useState<string | null>(null);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);

  const load = useCallback(async () => {
    try {
      const q = await api<{ queue: QueueEntry[] }>(`/api/signoffs${groupId ? `?groupId=${groupId}` : ''}`);
      setQueue(q.queue);
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load the queue.' });
    }
  }, [groupId]);
  useEffect(() => void load(), [load]);
  useEffect(() => void api<{ groups: Group[] }>('/api/machine-groups').then((g) => setGroups(g.groups)).catch(() => undefined), []);

  const refreshed = () => setVersion((v) => v + 1);
  useEffect(() => {
    if (message) live.current?.focus();
  }, [message]);

  return (
    <div className="space-y-8">
      <InductionRoster selfId={selfId} groups={groupList} machines={machines} timeZone={timeZone} locale={locale} onSignedOff={() => { refreshed(); void load(); }} />
      <section className="space-y-3" aria-labelledby="queue-heading">
        <div className="flex flex-wrap items-end justify-between gap-3">
          <div>
            <h2 id="queue-heading" className="text-xl">Walk-in sign-off</h2>
            <p className="hint">Everyone whose quiz is passed, with or without a seat at a session: sign off a person standing in front of you.</p>
          </div>
          <label className="field">
            <span>Machine group</span>
            <select className="input" value={groupId} onChange={(e) => setGroupId(e.target.value)}>
              <option value="">All groups</option>
              {groups.map((g) => <option key={g.id} value={g.id}>{g.name}</option>)}
            </select>
          </label>
        </div>
        {!queue ? <p className="hint">Loading…</p> : queue.length === 0 ? <p className="card p-4">Nobody is waiting for a sign-off{groupId ? ' in this group' : ''}.</p> : (
          <ul className="space-y-3" aria-label="Sign-off queue">
            {queue.map((q) => {
              const key = `${q.personId}:${q.groupId}`;
              return (
                <li key={key} className="card p-4" data-person={q.personEmail}>
                  <div className="flex flex-wrap items-center justify-between gap-3">
                    <div>
                      <p className="font-semibold">{q.personName} <span className="hint">· {q.personEmail}</span></p>
                      <p className="hint">{q.groupName} · quiz passed {fmt(q.quizPassedAt)}</p>
                    </div>
                    {q.personId === selfId ? (
                      <span className="hint">Another instructor must sign you off.</span>
                    ) : (
                      <button type="button" className="btn btn-quiet" onClick={() => setOpen(open === key ? null : key)} aria-expanded={open === key}>
                        {open === key ? 'Close the checklist' : `Open the checklist for ${q.personName}`}
                      </button>
                    )}
                  </div>
                  {open === key && (
                    <SignoffForm entry={q} onDone={(text) => { setOpen(null); setMessage({ tone: 'ok', text }); refreshed(); void load(); }} />
                  )}
                </li>
              );
            })}
          </ul>
        )}
        <p ref={live} tabIndex={-1} aria-live="polite" role={message?.tone === 'stop' ? 'alert' : 'status'} className={message ? `notice notice-${message.tone}` : 'sr-only-focusable'}>{message?.text ?? ''}</p>
      </section>
      <Suspensions onMessage={setMessage} version={version} />
    </div>
  );
}

function SignoffForm({ entry, onDone }: { entry: QueueEntry; onDone: (text: string) => void }) {
  const [ticked, setTicked] = useState<Record<string, boolean>>({});
  const [notes, setNotes] = useState('');
  const [level, setLevel] = useState<'basic' | 'advanced'>('basic');
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const all = entry.checklist.every((i) => ticked[i]);

  async function submit(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setError(null);
    try {
      const r = await api<{ expiresAt: string; expiresOn: string }>('/api/signoffs', {
        method: 'POST',
        json: { personId: entry.personId, groupId: entry.groupId, level, notes, checklist: entry.checklist.map((item) => ({ item, done: Boolean(ticked[item]) })) },
      });
      onDone(`${entry.personName} is cleared (${level}) on ${entry.groupName} until the end of ${r.expiresOn}.`);
    } catch (err) {
      setError(err instanceof ApiError ? err.message : 'Could not record the sign-off.');
    } finally {
      setBusy(false);
    }
  }

  return (
    <form className="mt-4 space-y-3 border-t border-line pt-4" onSubmit={submit}>
      <fieldset>
        <legend className="font-semibold">Practical checklist — tick what {entry.personName} showed you</legend>
        <ul className="mt-2 space-y-2">
          {entry.checklist.map((item) => (
            <li key={item}>
              <label className="flex items-start gap-2">
                <input type="checkbox" className="mt-1 h-4 w-4" checked={Boolean(ticked[item])} onChange={(e) => {
                  const on = e.currentTarget.checked;
                  setTicked((t) => ({ ...t, [item]: on }));
                }} />
                <span>{item}</span>
              </label>
            </li>
          ))}
        </ul>
      </fieldset>
      <div className="grid gap-3 sm:grid-cols-[1fr_auto]">
        <label className="field">
          <span>Notes</span>
          <textarea className="input" rows={2} value={notes} maxLength={2000} onChange={(e) => setNotes(e.target.value)} />
        </label>
        <label className="field">
          <span>Level</span>
          <select className="input" value={level} onChange={(e) => setLevel(e.target.value as 'basic' | 'advanced')}>
            <option value="basic">Basic</option>
            <option value="advanced">Advanced (attachments such as a rotary axis)</option>
          </select>
        </label>
      </div>
      {error && <p className="notice notice-stop" role="alert">{error}</p>}
      <button type="submit" className="btn btn-primary" disabled={busy || !all}>{all ? `Sign off ${entry.personName} as cleared` : 'Tick every checklist item to sign off'}</button>
    </form>
  );
}

function Suspensions({ onMessage, version }: { onMessage: (m: { tone: 'ok' | 'stop'; text: string }) => void; version: number }) {
  const [q, setQ] = useState('');
  const [rows, setRows] = useState<ClearanceRow[] | null>(null);
  const [acting, setActing] = useState<{ id: string; kind: 'suspend' | 'reinstate' } | null>(null);
  const [reason, setReason] = useState('');

  const search = useCallback(async (text: string) => {
    const r = await api<{ clearances: ClearanceRow[] }>(`/api/clearances?q=${encodeURIComponent(text)}`);
    setRows(r.clearances);
  }, []);
  useEffect(() => {
    const t = setTimeout(() => void search(q.trim()).catch(() => undefined), 250);
    return () => clearTimeout(t);
  }, [q, search, version]);

  async function act(e: React.FormEvent) {
    e.preventDefault();
    if (!acting) return;
    try {
      const r = await api<{ state: string }>(`/api/clearances/${acting.id}/${acting.kind}`, { method: 'POST', json: { reason } });
      onMessage({ tone: 'ok', text: acting.kind === 'suspend' ? 'The clearance is suspended; the person was e-mailed.' : `The clearance is reinstated (${r.state}).` });
      setActing(null);
      setReason('');
      await search(q.trim());
    } catch (err) {
      onMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'Could not change the clearance.' });
    }
  }

  return (
    <section className="space-y-3" aria-labelledby="susp-heading">
      <h2 id="susp-heading" className="text-xl">Suspend or reinstate</h2>
      <p className="hint">Suspend a clearance at once when someone runs a machine unsafely; they cannot book or check in until an instructor reinstates it.</p>
      <label className="field max-w-md">
        <span>Find a person</span>
        <input className="input" type="search" value={q} onChange={(e) => setQ(e.target.value)} placeholder="Name or e-mail" />
      </label>
      {rows && (
        <div className="card overflow-x-auto p-2">
          <table className="table">
            <thead><tr><th>Person</th><th>Group</th><th>State</th><th>Cleared until</th><th><span className="sr-only-focusable">Actions</span></th></tr></thead>
            <tbody>
              {rows.length === 0 && <tr><td colSpan={5}>No clearances match.</td></tr>}
              {rows.map((r) => (
                <tr key={r.id} data-clearance={r.id}>
                  <td>{r.personName}<div className="hint">{r.personEmail}</div></td>
                  <td>{r.groupName}</td>
                  <td>{r.state}{r.suspendedReason ? <div className="hint">“{r.suspendedReason}”</div> : null}</td>
                  <td>{r.expiresOn ? `end of ${r.expiresOn}` : '—'}</td>
                  <td>
                    {acting?.id === r.id ? (
                      <form className="flex flex-wrap gap-2" onSubmit={act}>
                        <input className="input" aria-label="Reason" required minLength={3} value={reason} onChange={(e) => setReason(e.target.value)} placeholder="Reason" />
                        <button className="btn btn-primary" type="submit">{acting.kind === 'suspend' ? 'Suspend' : 'Reinstate'}</button>
                        <button className="btn btn-quiet" type="button" onClick={() => setActing(null)}>Cancel</button>
                      </form>
                    ) : r.state === 'suspended' ? (
                      <button type="button" className="btn btn-quiet" onClick={() => setActing({ id: r.id, kind: 'reinstate' })}>Reinstate…</button>
                    ) : (
                      <button type="button" className="btn btn-quiet" onClick={() => setActing({ id: r.id, kind: 'suspend' })}>Suspend…</button>
                    )}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}
