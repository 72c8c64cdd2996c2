/**
 * Sign-offs (instructor): induction sessions. Publish a session for a machine group; open a session's roster
 * to see each person's quiz result, mark attendance, tick the practical checklist and sign people off — one
 * at a time, or every present person with every item ticked in one go. Absent people are told and their
 * seat is released.
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import { api, ApiError } from './ui/api';
import { localToInstant } from '@lib/availability';
import { siteFormat } from '@lib/format';

interface Group { id: string; name: string }
interface MachineOpt { id: string; name: string; groupId: string | null }
interface Session { id: string; groupId: string; groupName: string; startsAt: string; endsAt: string; capacity: number; seatsTaken: number; kind: 'first' | 'refresher'; place: string }
interface Entry {
  seatId: string; personId: string; personName: string; personEmail: string; seatState: 'booked' | 'present' | 'absent';
  clearanceState: string; quiz: { passed: boolean; scorePct: number | null; submittedAt: string } | null; noShows: number;
  signoff: { id: string; level: string; signedAt: string } | null;
}
interface Roster { session: Session; checklist: string[]; entries: Entry[]; waiting: { personName: string; personEmail: string }[]; counts: { booked: number; present: number; absent: number; signedOff: number } }
interface Draft { ticked: Record<string, boolean>; level: 'basic' | 'advanced'; notes: string }

const KIND = { first: 'First induction', refresher: 'Refresher' } as const;

export default function InductionRoster({ selfId, groups, machines, timeZone, locale, onSignedOff }: { selfId: string; groups: Group[]; machines: MachineOpt[]; timeZone: string; locale: string; onSignedOff?: () => void }) {
  const [sessions, setSessions] = useState<Session[] | null>(null);
  const [openId, setOpenId] = useState<string | null>(null);
  const [publishing, setPublishing] = useState(false);
  const when = (s: { startsAt: string; endsAt: string }) => siteFormat(locale, timeZone).range(new Date(s.startsAt), new Date(s.endsAt));

  const load = useCallback(async () => {
    const from = new Date(Date.now() - 2 * 86_400_000).toISOString();
    setSessions(await api<Session[]>(`/api/induction-sessions?from=${encodeURIComponent(from)}`));
  }, []);
  useEffect(() => void load().catch(() => setSessions([])), [load]);

  return (
    <section className="space-y-3" aria-labelledby="sessions-heading">
      <div className="flex flex-wrap items-end justify-between gap-3">
        <h2 id="sessions-heading" className="text-xl">Induction sessions</h2>
        <button type="button" className="btn btn-quiet" aria-expanded={publishing} onClick={() => setPublishing(!publishing)}>
          {publishing ? 'Close the form' : 'Publish a session…'}
        </button>
      </div>
      <p className="hint">Members whose quiz is passed book a seat from their Clearances screen. Open a session to mark who came and sign them off.</p>
      {publishing && <PublishForm groups={groups} machines={machines} timeZone={timeZone} onDone={() => { setPublishing(false); void load(); }} />}
      {!sessions ? <p className="hint">Loading…</p> : sessions.length === 0 ? <p className="card p-4">No sessions in the coming weeks. Publish one so members who passed the quiz can book a seat.</p> : (
        <ul className="space-y-3" aria-label="Induction sessions">
          {sessions.map((s) => (
            <li key={s.id} className="card p-4" data-session-row={s.id}>
              <div className="flex flex-wrap items-center justify-between gap-3">
                <div>
                  <p className="font-semibold">{when(s)}</p>
                  <p className="hint">{s.groupName} · {KIND[s.kind]} · {s.place} · {s.seatsTaken} of {s.capacity} seats taken</p>
                </div>
                <button type="button" className="btn btn-quiet" aria-expanded={openId === s.id} onClick={() => setOpenId(openId === s.id ? null : s.id)}>
                  {openId === s.id ? 'Close the roster' : 'Open the roster'}
                </button>
              </div>
              {openId === s.id && <RosterPanel sessionId={s.id} selfId={selfId} timeZone={timeZone} locale={locale} onChange={() => { void load(); onSignedOff?.(); }} />}
            </li>
          ))}
        </ul>
      )}
    </section>
  );
}

function PublishForm({ groups, machines, timeZone, onDone }: { groups: Group[]; machines: MachineOpt[]; timeZone: string; onDone: () => void }) {
  const [f, setF] = useState({ groupId: groups[0]?.id ?? '', kind: 'first', date: '', from: '10:00', until: '11:30', machineId: '', place: '', capacity: '4', bring: 'Closed shoes; a small offcut of 3 mm plywood or acrylic.' });
  const [error, setError] = useState<{ text: string; fields?: Record<string, string> } | null>(null);
  const [busy, setBusy] = useState(false);
  const set = (k: keyof typeof f) => (e: React.ChangeEvent<HTMLInputElement | HTMLSelectElement>) => setF({ ...f, [k]: e.currentTarget.value });
  const inGroup = machines.filter((m) => m.groupId === f.groupId);

  function instant(date: string, hm: string): string | null {
    const d = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
    const t = /^(\d{2}):(\d{2})$/.exec(hm);
    if (!d || !t) return null;
    return localToInstant(Number(d[1]), Number(d[2]), Number(d[3]), Number(t[1]) * 60 + Number(t[2]), timeZone).toISOString();
  }

  async function submit(e: React.FormEvent) {
    e.preventDefault();
    const startsAt = instant(f.date, f.from);
    const endsAt = instant(f.date, f.until);
    if (!startsAt || !endsAt) { setError({ text: 'Choose the date and the times.' }); return; }
    setBusy(true);
    setError(null);
    try {
      await api('/api/induction-sessions', { method: 'POST', json: { groupId: f.groupId, kind: f.kind, startsAt, endsAt, machineId: f.machineId || null, place: f.place, capacity: Number(f.capacity), bring: f.bring } });
      onDone();
    } catch (err) {
      setError(err instanceof ApiError ? { text: err.message, fields: err.fields } : { text: 'Could not publish the session.' });
    } finally {
      setBusy(false);
    }
  }

  return (
    <form className="card grid gap-3 p-4 sm:grid-cols-2" onSubmit={submit} aria-label="Publish a session">
      <label className="field"><span>Machine group</span>
        <select className="input" value={f.groupId} onChange={set('groupId')}>{groups.map((g) => <option key={g.id} value={g.id}>{g.name}</option>)}</select>
      </label>
      <label className="field"><span>Kind</span>
        <select className="input" value={f.kind} onChange={set('kind')}><option value="first">First induction</option><option value="refresher">Refresher (for lapsed clearances)</option></select>
      </label>
      <label className="field"><span>Date</span><input className="input" type="date" required value={f.date} onChange={set('date')} /></label>
      <div className="grid grid-cols-2 gap-3">
        <label className="field"><span>From</span><input className="input" type="time" step={900} required value={f.from} onChange={set('from')} /></label>
        <label className="field"><span>Until</span><input className="input" type="time" step={900} required value={f.until} onChange={set('until')} /></label>
      </div>
      <label className="field"><span>Machine (its time is held as a class block)</span>
        <select className="input" value={f.machineId} onChange={set('machineId')}>
          <option value="">None — in the room</option>
          {inGroup.map((m) => <option key={m.id} value={m.id}>{m.name}</option>)}
        </select>
        {error?.fields?.machineId && <span className="field-error">{error.fields.machineId}</span>}
      </label>
      <label className="field"><span>Room or meeting point</span><input className="input" value={f.place} maxLength={120} onChange={set('place')} placeholder="e.g. Laser room, the bench by Laser A" />
        {error?.fields?.place && <span className="field-error">{error.fields.place}</span>}
      </label>
      <label className="field"><span>Seats</span><input className="input" type="number" min={1} max={50} value={f.capacity} onChange={set('capacity')} /></label>
      <label className="field"><span>What to bring</span><input className="input" value={f.bring} maxLength={500} onChange={set('bring')} /></label>
      {error && <p className="notice notice-stop sm:col-span-2" role="alert">{error.text}{error.fields?.startsAt ? ` ${error.fields.startsAt}` : ''}{error.fields?.endsAt ? ` ${error.fields.endsAt}` : ''}</p>}
      <div className="sm:col-span-2"><button className="btn btn-primary" type="submit" disabled={busy}>{busy ? 'Publishing…' : 'Publish the session'}</button></div>
    </form>
  );
}

function RosterPanel({ sessionId, selfId, timeZone, locale, onChange }: { sessionId: string; selfId: string; timeZone: string; locale: string; onChange: () => void }) {
  const [roster, setRoster] = useState<Roster | null>(null);
  const [drafts, setDrafts] = useState<Record<string, Draft>>({});
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);
  const live = useRef<HTMLParagraphElement>(null);
  const fmt = (iso: string) => siteFormat(locale, timeZone).date(new Date(iso));

  const load = useCallback(async () => setRoster(await api<Roster>(`/api/induction-sessions/${sessionId}/roster`)), [sessionId]);
  useEffect(() => void load().catch((e) => setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load the roster.' })), [load]);

  const say = (tone: 'ok' | 'stop', text: string) => { setMessage({ tone, text }); requestAnimationFrame(() => live.current?.focus()); };
  const draft = (id: string): Draft => drafts[id] ?? { ticked: {}, level: 'basic', notes: '' };
  const setDraft = (id: string, d: Partial<Draft>) => setDrafts((all) => ({ ...all, [id]: { ...draft(id), ...d } }));
  const complete = (id: string) => Boolean(roster?.checklist.every((i) => draft(id).ticked[i]));

  async function attendance(e: Entry, present: boolean) {
    setBusy(true);
    try {
      await api(`/api/induction-sessions/${sessionId}/attendance`, { method: 'POST', json: { personId: e.personId, present } });
      say('ok', present ? `${e.personName} is marked present.` : `${e.personName} is marked absent: the seat is released and they were e-mailed.`);
      await load();
      onChange();
    } catch (err) {
      say('stop', err instanceof ApiError ? err.message : 'Could not save the attendance.');
    } finally {
      setBusy(false);
    }
  }

  async function signOne(e: Entry): Promise<string> {
    const d = draft(e.personId);
    const r = await api<{ expiresOn: string; level: string }>(`/api/induction-sessions/${sessionId}/signoffs`, {
      method: 'POST', json: { personId: e.personId, present: true, checklist: d.ticked, level: d.level, notes: d.notes },
    });
    return `${e.personName} is cleared (${r.level}) until the end of ${r.expiresOn}.`;
  }

  async function sign(list: Entry[]) {
    setBusy(true);
    const done: string[] = [];
    try {
      for (const e of list) done.push(await signOne(e));
      say('ok', done.join(' '));
    } catch (err) {
      say('stop', `${done.join(' ')} ${err instanceof ApiError ? err.message : 'Could not record the sign-off.'}`.trim());
    } finally {
      await load();
      onChange();
      setBusy(false);
    }
  }

  if (!roster) return <p className="hint mt-3">Loading the roster…</p>;
  const ready = roster.entries.filter((e) => e.seatState === 'present' && !e.signoff && e.personId !== selfId && complete(e.personId));

  return (
    <div className="mt-4 space-y-3 border-t border-line pt-4" data-roster={sessionId}>
      <p className="text-sm">{roster.counts.booked} booked · {roster.counts.present} present · {roster.counts.absent} absent · {roster.counts.signedOff} signed off{roster.waiting.length ? ` · ${roster.waiting.length} waiting for a seat` : ''}</p>
      <p ref={live} tabIndex={-1} aria-live="polite" role={message?.tone === 'stop' ? 'alert' : 'status'} className={message ? `notice notice-${message.tone}` : 'sr-only-focusable'}>{message?.text ?? ''}</p>
      {roster.entries.length === 0 ? <p>Nobody has booked a seat yet.</p> : (
        <ul className="space-y-3" aria-label="Roster">
          {roster.entries.map((e) => {
            const d = draft(e.personId);
            return (
              <li key={e.seatId} className="rounded border border-line p-3" data-roster-person={e.personEmail}>
                <div className="flex flex-wrap items-start justify-between gap-2">
                  <div>
                    <p className="font-semibold">{e.personName} <span className="hint">· {e.personEmail}</span></p>
                    <p className="hint">
                      Quiz: {e.quiz ? (e.quiz.passed ? `passed ${e.quiz.scorePct ?? ''} % on ${fmt(e.quiz.submittedAt)}` : `not passed (${e.quiz.scorePct ?? 0} %)`) : 'not taken'}
                      {' · '}clearance: {e.clearanceState}{e.noShows ? ` · missed ${e.noShows} earlier session${e.noShows === 1 ? '' : 's'}` : ''}
                    </p>
                  </div>
                  {e.signoff ? (
                    <span className="status status-ok"><span aria-hidden="true">✓</span>Signed off ({e.signoff.level})</span>
                  ) : (
                    <div role="group" aria-label={`Attendance of ${e.personName}`} className="flex gap-1">
                      <button type="button" className={`btn ${e.seatState === 'present' ? 'btn-primary' : 'btn-quiet'}`} aria-pressed={e.seatState === 'present'} disabled={busy} onClick={() => attendance(e, true)}>Present</button>
                      <button type="button" className={`btn ${e.seatState === 'absent' ? 'btn-primary' : 'btn-quiet'}`} aria-pressed={e.seatState === 'absent'} disabled={busy || e.seatState === 'absent'} onClick={() => attendance(e, false)}>Absent</button>
                    </div>
                  )}
                </div>
                {e.seatState === 'present' && !e.signoff && (e.personId === selfId ? <p className="hint mt-2">Another instructor must sign you off.</p> : (
                  <div className="mt-3 space-y-2">
                    <fieldset>
                      <legend className="text-sm font-semibold">Practical checklist — tick what {e.personName} showed you</legend>
                      <ul className="mt-1 space-y-1">
                        {roster.checklist.map((item) => (
                          <li key={item}><label className="flex items-start gap-2 text-sm">
                            <input type="checkbox" className="mt-1 h-4 w-4" checked={Boolean(d.ticked[item])} onChange={(ev) => { const on = ev.currentTarget.checked; setDraft(e.personId, { ticked: { ...d.ticked, [item]: on } }); }} />
                            <span>{item}</span>
                          </label></li>
                        ))}
                      </ul>
                    </fieldset>
                    <div className="grid gap-2 sm:grid-cols-[1fr_auto]">
                      <label className="field"><span>Notes</span><input className="input" value={d.notes} maxLength={2000} onChange={(ev) => setDraft(e.personId, { notes: ev.currentTarget.value })} /></label>
                      <label className="field"><span>Level</span>
                        <select className="input" value={d.level} onChange={(ev) => setDraft(e.personId, { level: ev.currentTarget.value as Draft['level'] })}>
                          <option value="basic">Basic</option><option value="advanced">Advanced (attachments)</option>
                        </select>
                      </label>
                    </div>
                    <button type="button" className="btn btn-primary" disabled={busy || !complete(e.personId)} onClick={() => sign([e])}>
                      {complete(e.personId) ? `Sign off ${e.personName} as cleared` : 'Tick every item to sign off'}
                    </button>
                  </div>
                ))}
              </li>
            );
          })}
        </ul>
      )}
      {ready.length > 1 && (
        <button type="button" className="btn btn-primary" disabled={busy} onClick={() => sign(ready)}>
          Sign off all {ready.length} present people with every item ticked
        </button>
      )}
    </div>
  );
}
