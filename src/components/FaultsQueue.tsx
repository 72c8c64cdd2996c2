/** Stewards and admins: the fault queue — triage, notes, resolve — and putting machines back into service. */
import { useCallback, useEffect, useState } from 'react';
import { FAULT_SEVERITIES, SEVERITY_TEXT, type FaultSeverity } from '@lib/faults-shared';
import { STATUS_TEXT, type MachineStatus } from '@lib/machines-shared';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

interface FaultView {
  id: string; machineId: string; machineName: string; machineCode: string; machineStatus: MachineStatus; reporterName: string;
  severity: FaultSeverity; summary: string; details: string; status: 'open' | 'triaged' | 'resolved';
  photos: { url: string; width: number; height: number }[]; resolution: string | null; resolvedByName: string | null;
  createdAt: string; triagedAt: string | null; resolvedAt: string | null; notes: { authorName: string; body: string; at: string }[];
}
interface MachineView { id: string; code: string; name: string; status: MachineStatus }

const CHECKS = {
  causeFixed: 'The cause of the fault is fixed or made safe',
  interlocksTested: 'Lid interlock and emergency stop tested',
  coolingAndExtraction: 'Cooling and extraction run normally',
  testFire: 'A low-power test job ran attended, without trouble',
} as const;
type CheckKey = keyof typeof CHECKS;

type Msg = { tone: 'ok' | 'stop'; text: string } | null;

export default function FaultsQueue({ timeZone, locale }: { timeZone: string; locale: string }) {
  const [status, setStatus] = useState<'unresolved' | 'resolved' | ''>('unresolved');
  const [severity, setSeverity] = useState<FaultSeverity | ''>('');
  const [faults, setFaults] = useState<FaultView[] | null>(null);
  const [machines, setMachines] = useState<MachineView[]>([]);
  const [openStops, setOpenStops] = useState<FaultView[]>([]);
  const [message, setMessage] = useState<Msg>(null);
  const fmt = (iso: string) => siteFormat(locale, timeZone).dateTime(new Date(iso));

  const load = useCallback(async () => {
    const q = new URLSearchParams();
    if (status) q.set('status', status);
    if (severity) q.set('severity', severity);
    try {
      const [f, m, stops] = await Promise.all([
        api<FaultView[]>(`/api/faults?${q}`), api<MachineView[]>('/api/machines'), api<FaultView[]>('/api/faults?status=unresolved&severity=stop'),
      ]);
      setFaults(f);
      setMachines(m);
      setOpenStops(stops);
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load the queue.' });
    }
  }, [status, severity]);
  useEffect(() => void load(), [load]);

  const done = async (text: string, tone: 'ok' | 'stop' = 'ok') => {
    setMessage({ text, tone });
    await load();
  };
  const notInService = machines.filter((m) => m.status !== 'in service');
  const stopsOn = (machineId: string) => openStops.filter((f) => f.machineId === machineId);

  return (
    <div className="space-y-5">
      <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      {notInService.length > 0 && (
        <section className="space-y-3" aria-labelledby="attention-h">
          <h2 id="attention-h" className="text-xl">Out of service or degraded</h2>
          <div className="grid gap-3 md:grid-cols-2">
            {notInService.map((m) => <ReturnPanel key={m.id} machine={m} stops={stopsOn(m.id)} onDone={done} />)}
          </div>
        </section>
      )}
      <section className="space-y-3" aria-label="Fault queue">
        <div className="flex flex-wrap items-end gap-3">
          <h2 className="mr-auto text-xl">Queue</h2>
          <label className="field"><span>Show</span>
            <select className="input" value={status} onChange={(e) => setStatus(e.target.value as typeof status)}>
              <option value="unresolved">Open and triaged</option><option value="resolved">Resolved</option><option value="">All</option>
            </select>
          </label>
          <label className="field"><span>Severity</span>
            <select className="input" value={severity} onChange={(e) => setSeverity(e.target.value as typeof severity)}>
              <option value="">Any</option>{FAULT_SEVERITIES.map((s) => <option key={s} value={s}>{SEVERITY_TEXT[s].label}</option>)}
            </select>
          </label>
        </div>
        {faults && faults.length === 0 && <p className="card p-5">Nothing in the queue.</p>}
        {faults?.map((f) => <FaultCard key={f.id} f={f} fmt={fmt} onDone={done} lastStop={f.severity === 'stop' && f.status !== 'resolved' && f.machineStatus === 'out of service' && stopsOn(f.machineId).length === 1} />)}
      </section>
    </div>
  );
}

function Checks({ checks, setChecks }: { checks: Record<CheckKey, boolean>; setChecks: (c: Record<CheckKey, boolean>) => void }) {
  return (
    <fieldset className="space-y-1">
      <legend className="font-semibold">Before it goes back into service</legend>
      {(Object.keys(CHECKS) as CheckKey[]).map((k) => (
        <label key={k} className="flex items-start gap-2 text-sm">
          <input type="checkbox" className="mt-0.5 h-4 w-4" checked={checks[k]} onChange={(e) => setChecks({ ...checks, [k]: e.target.checked })} />
          {CHECKS[k]}
        </label>
      ))}
    </fieldset>
  );
}

const NO_CHECKS: Record<CheckKey, boolean> = { causeFixed: false, interlocksTested: false, coolingAndExtraction: false, testFire: false };

/** A message next to the control that caused it, focused so a screen reader and the eye both land on it. */
function PanelMessage({ msg }: { msg: Msg }) {
  return (
    <p role="alert" tabIndex={-1} ref={(el) => { if (el && msg) el.focus(); }} className={msg ? `notice notice-${msg.tone} text-sm` : 'sr-only'} data-panel-message>
      {msg?.text ?? ''}
    </p>
  );
}

function ReturnPanel({ machine, stops, onDone }: { machine: MachineView; stops: FaultView[]; onDone: (t: string, tone?: 'ok' | 'stop') => Promise<void> }) {
  const [checks, setChecks] = useState<Record<CheckKey, boolean>>(NO_CHECKS);
  const [reason, setReason] = useState('');
  const [busy, setBusy] = useState(false);
  const [msg, setMsg] = useState<Msg>(null);
  const needsChecks = machine.status === 'out of service';
  const ready = reason.trim().length >= 3 && (!needsChecks || Object.values(checks).every(Boolean));
  const st = STATUS_TEXT[machine.status];
  async function submit() {
    setBusy(true);
    try {
      await api(`/api/machines/${machine.id}/status`, { method: 'POST', json: { status: 'in service', reason, ...(needsChecks ? { checklist: checks } : {}) } });
      await onDone(`${machine.name} is back in service.`);
    } catch (e) {
      setMsg({ tone: 'stop', text: e instanceof ApiError ? e.message : 'The status was not changed.' });
    } finally {
      setBusy(false);
    }
  }
  return (
    <article className="card space-y-3 p-4" data-machine={machine.code}>
      <div className="flex items-center justify-between gap-2">
        <h3 className="text-lg font-semibold">{machine.name}</h3>
        <span className={`status status-${st.tone}`}><span aria-hidden="true">{st.icon}</span> {st.label}</span>
      </div>
      {stops.length > 0 && (
        <div className="notice notice-warn text-sm" data-open-stops>
          <p><strong>{stops.length === 1 ? 'Open stop fault' : `${stops.length} open stop faults`}</strong> — resolve {stops.length === 1 ? 'it' : 'them'} before the machine goes back into service (the last one can be resolved and returned in one step):</p>
          <ul className="mt-1 list-disc pl-5">{stops.map((f) => <li key={f.id}>{f.summary}</li>)}</ul>
        </div>
      )}
      {needsChecks && <Checks checks={checks} setChecks={setChecks} />}
      <label className="field"><span>Note (what was done; the reporter is told)</span>
        <textarea className="input" rows={2} value={reason} onChange={(e) => setReason(e.target.value)} maxLength={1000} />
      </label>
      <PanelMessage msg={msg} />
      <button type="button" className="btn btn-primary" disabled={busy || !ready} onClick={() => void submit()}>Back into service</button>
    </article>
  );
}

function FaultCard({ f, fmt, onDone, lastStop }: { f: FaultView; fmt: (iso: string) => string; onDone: (t: string, tone?: 'ok' | 'stop') => Promise<void>; lastStop: boolean }) {
  const [sev, setSev] = useState<FaultSeverity>(f.severity);
  const [note, setNote] = useState('');
  const [resolution, setResolution] = useState('');
  const [busy, setBusy] = useState(false);
  const [msg, setMsg] = useState<Msg>(null);
  const [checks, setChecks] = useState<Record<CheckKey, boolean>>(NO_CHECKS);
  const sv = SEVERITY_TEXT[f.severity];
  async function call(path: string, json: unknown, ok: string) {
    setBusy(true);
    try {
      const out = await api<{ outcome?: { next: string } }>(path, { method: 'POST', json });
      setNote('');
      await onDone(out?.outcome ? `${ok} ${out.outcome.next}` : ok);
    } catch (e) {
      setMsg({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Not saved.' });
    } finally {
      setBusy(false);
    }
  }
  return (
    <article className="card space-y-3 p-4" data-fault={f.id} data-severity={f.severity}>
      <div className="flex flex-wrap items-start justify-between gap-2">
        <div>
          <p className="flex flex-wrap items-center gap-2">
            <span className={`status status-${sv.tone}`}>{sv.label}</span>
            <span className="hint">{f.status}</span>
            <a href={`/m/${f.machineCode}`} className="font-semibold">{f.machineName}</a>
          </p>
          <h3 className="mt-1 text-lg">{f.summary}</h3>
          <p className="hint">Reported by {f.reporterName}, {fmt(f.createdAt)}{f.resolvedAt ? ` · resolved ${fmt(f.resolvedAt)} by ${f.resolvedByName}` : ''}</p>
        </div>
        <span className={`status status-${STATUS_TEXT[f.machineStatus].tone}`}>{STATUS_TEXT[f.machineStatus].icon} {STATUS_TEXT[f.machineStatus].label}</span>
      </div>
      {f.details && <p className="whitespace-pre-line">{f.details}</p>}
      {f.photos.length > 0 && (
        <div className="flex flex-wrap gap-2">
          {f.photos.map((p, i) => (
            <a key={p.url} href={p.url} target="_blank" rel="noopener"><img src={p.url} alt={`Photo ${i + 1} of the fault`} className="h-24 w-24 rounded object-cover" loading="lazy" /></a>
          ))}
        </div>
      )}
      {f.notes.length > 0 && (
        <ul className="space-y-1 border-l-2 border-[var(--color-line)] pl-3 text-sm">
          {f.notes.map((n, i) => <li key={i}><strong>{n.authorName}</strong> <span className="hint">{fmt(n.at)}</span>: {n.body}</li>)}
        </ul>
      )}
      {f.resolution && <p className="notice notice-ok text-sm"><strong>Resolved:</strong> {f.resolution}</p>}
      {f.status !== 'resolved' && (
        <div className="grid gap-3 md:grid-cols-2">
          <div className="space-y-2">
            <label className="field"><span>Severity</span>
              <select className="input" value={sev} onChange={(e) => setSev(e.target.value as FaultSeverity)}>
                {FAULT_SEVERITIES.map((s) => <option key={s} value={s}>{SEVERITY_TEXT[s].label}</option>)}
              </select>
            </label>
            <label className="field"><span>Note</span>
              <textarea className="input" rows={2} value={note} onChange={(e) => setNote(e.target.value)} maxLength={2000} />
            </label>
            <button type="button" className="btn btn-quiet" disabled={busy} onClick={() => void call(`/api/faults/${f.id}/triage`, { ...(sev !== f.severity ? { severity: sev } : {}), ...(note.trim() ? { note } : {}) }, 'Triaged.')}>
              {f.status === 'open' ? 'Triage' : 'Save triage'}
            </button>
          </div>
          <div className="space-y-2">
            <label className="field"><span>Resolution (what was done)</span>
              <textarea className="input" rows={2} value={resolution} onChange={(e) => setResolution(e.target.value)} maxLength={2000} />
            </label>
            <button type="button" className="btn btn-primary" disabled={busy || resolution.trim().length < 3} onClick={() => void call(`/api/faults/${f.id}/resolve`, { resolution }, 'Resolved; the reporter is told.')}>Resolve</button>
            {lastStop && (
              <div className="space-y-2 border-t border-[var(--color-line)] pt-2" data-resolve-and-return>
                <p className="text-sm">This is the last open stop fault on {f.machineName}. Resolve it and put the machine back into service in one step:</p>
                <Checks checks={checks} setChecks={setChecks} />
                <button type="button" className="btn btn-quiet" disabled={busy || resolution.trim().length < 3 || !Object.values(checks).every(Boolean)}
                  onClick={() => void call(`/api/faults/${f.id}/resolve`, { resolution, returnToService: { checklist: checks } }, 'Resolved; the reporter is told.')}>
                  Resolve and return to service
                </button>
              </div>
            )}
          </div>
        </div>
      )}
      <PanelMessage msg={msg} />
    </article>
  );
}
