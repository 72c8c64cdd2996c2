/** Stewards and admins: review new-material requests — approve into the catalogue with a rule, or refuse with a reason. */
import { useCallback, useEffect, useState } from 'react';
import { MATERIAL_CATEGORIES, MATERIAL_MODES, MATERIAL_RULES, RULE_TEXT, type MaterialMode, type MaterialRule } from '@lib/material-rules';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

interface Req {
  id: string; name: string; supplier: string; composition: string; thicknessMm: number; mode: MaterialMode; requesterName: string;
  sdsFilename: string; sdsUrl: string; screenVerdict: 'blocked' | 'review'; screenReason: string; status: 'pending' | 'approved' | 'refused';
  decidedByName: string | null; decisionReason: string | null; createdAt: string;
}

export default function MaterialRequestsReview({ timeZone, locale }: { timeZone: string; locale: string }) {
  const [rows, setRows] = useState<Req[] | null>(null);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const load = useCallback(async () => {
    try { setRows(await api<Req[]>('/api/material-requests')); } catch (e) { setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load requests.' }); }
  }, []);
  useEffect(() => void load(), [load]);
  return (
    <div className="space-y-4">
      <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      {rows && rows.length === 0 && <p className="card p-5">No requests yet.</p>}
      {rows?.map((r) => <RequestCard key={r.id} r={r} askedOn={siteFormat(locale, timeZone).date(new Date(r.createdAt))} onDone={async (text, tone) => { setMessage({ text, tone }); await load(); }} />)}
    </div>
  );
}

function RequestCard({ r, askedOn, onDone }: { r: Req; askedOn: string; onDone: (text: string, tone: 'ok' | 'stop') => Promise<void> }) {
  const [rule, setRule] = useState<MaterialRule>(r.screenVerdict === 'blocked' ? 'blocked' : 'limited');
  const [category, setCategory] = useState('other');
  const [modes, setModes] = useState<MaterialMode[]>([r.mode]);
  const [reason, setReason] = useState(r.screenVerdict === 'blocked' ? r.screenReason : '');
  const [busy, setBusy] = useState(false);
  async function decide(decision: 'approve' | 'refuse') {
    setBusy(true);
    try {
      await api(`/api/material-requests/${r.id}/decision`, { method: 'POST', json: decision === 'refuse' ? { decision, reason } : { decision, rule, reason, category, modes: rule === 'blocked' ? [] : modes } });
      await onDone(`${decision === 'approve' ? 'Approved' : 'Refused'} ${r.name}; ${r.requesterName} will get an e-mail.`, 'ok');
    } catch (e) {
      await onDone(e instanceof ApiError ? e.message : 'The decision was not saved.', 'stop');
    } finally { setBusy(false); }
  }
  return (
    <article className="card space-y-3 p-5" data-request={r.name}>
      <div className="flex flex-wrap items-start justify-between gap-2">
        <div>
          <h2 className="text-xl">{r.name}</h2>
          <p className="hint">{r.supplier} · {r.thicknessMm} mm · {r.mode} · asked by {r.requesterName} on {askedOn}</p>
          <p className="font-mono text-sm">{r.composition}</p>
        </div>
        <span className={`status status-${r.status === 'pending' ? 'warn' : r.status === 'approved' ? 'ok' : 'stop'}`}>{r.status}</span>
      </div>
      <p className={`notice ${r.screenVerdict === 'blocked' ? 'notice-stop' : 'notice-warn'} text-sm`}><strong>Screening: {r.screenVerdict}.</strong> {r.screenReason}</p>
      <p><a href={r.sdsUrl} target="_blank" rel="noopener">Safety data sheet: {r.sdsFilename}</a></p>
      {r.status !== 'pending' ? (
        <p className="text-sm">Decided by {r.decidedByName}: {r.decisionReason}</p>
      ) : (
        <div className="grid gap-3 md:grid-cols-3">
          <label className="field"><span>Rule</span><select className="input" value={rule} onChange={(e) => setRule(e.target.value as MaterialRule)}>{MATERIAL_RULES.map((x) => <option key={x} value={x}>{RULE_TEXT[x].label}</option>)}</select></label>
          <label className="field"><span>Category</span><select className="input" value={category} onChange={(e) => setCategory(e.target.value)}>{MATERIAL_CATEGORIES.map((x) => <option key={x} value={x}>{x}</option>)}</select></label>
          <fieldset className="field"><legend className="font-semibold">Modes</legend><div className="flex gap-3">{MATERIAL_MODES.map((m) => (
            <label key={m} className="inline-flex items-center gap-1"><input type="checkbox" disabled={rule === 'blocked'} checked={modes.includes(m)} onChange={(e) => setModes(e.target.checked ? [...modes, m] : modes.filter((x) => x !== m))} />{m}</label>
          ))}</div></fieldset>
          <label className="field md:col-span-3"><span>Reason (members read it; the requester gets it by e-mail)</span><textarea className="input" rows={2} value={reason} onChange={(e) => setReason(e.target.value)} maxLength={1000} /></label>
          <div className="flex gap-3 md:col-span-3">
            <button type="button" className="btn btn-primary" disabled={busy || !reason.trim()} onClick={() => void decide('approve')}>Approve into the catalogue</button>
            <button type="button" className="btn btn-quiet" disabled={busy || !reason.trim()} onClick={() => void decide('refuse')}>Refuse</button>
          </div>
        </div>
      )}
    </article>
  );
}
