/** Report a fault at a machine (phone-first): what happened, how bad, up to three photos. */
import { useState } from 'react';
import { FAULT_SEVERITIES, SEVERITY_TEXT, type FaultSeverity } from '../lib/faults-shared';
import { ApiError } from './ui/api';

interface Props {
  machineCode: string;
  machineName: string;
}

const MAX_PHOTOS = 3;
const MAX_MB = 8;

export default function FaultReportForm({ machineCode, machineName }: Props) {
  const [summary, setSummary] = useState('');
  const [details, setDetails] = useState('');
  const [severity, setSeverity] = useState<FaultSeverity | ''>('');
  const [photos, setPhotos] = useState<File[]>([]);
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<{ text: string; fields?: Record<string, string> } | null>(null);
  const [done, setDone] = useState<{ status: string; bumped: number; severity: FaultSeverity } | null>(null);

  function pick(list: FileList | null) {
    const files = list ? [...list] : [];
    if (files.length > MAX_PHOTOS) {
      setError({ text: `Choose at most ${MAX_PHOTOS} photos.` });
      return;
    }
    const big = files.find((f) => f.size > MAX_MB * 1024 * 1024);
    if (big) {
      setError({ text: `${big.name} is larger than ${MAX_MB} MB.` });
      return;
    }
    setError(null);
    setPhotos(files);
  }

  async function submit(e: React.FormEvent) {
    e.preventDefault();
    if (!severity) {
      setError({ text: 'Choose how serious it is.', fields: { severity: 'Choose note, degraded or stop.' } });
      return;
    }
    setBusy(true);
    setError(null);
    const form = new FormData();
    form.set('summary', summary);
    form.set('details', details);
    form.set('severity', severity);
    for (const p of photos) form.append('photos', p);
    try {
      const res = await fetch(`/api/machines/${encodeURIComponent(machineCode)}/faults`, { method: 'POST', body: form, credentials: 'same-origin', headers: { accept: 'application/json' } });
      const data = await res.json().catch(() => null);
      if (!res.ok) {
        const err = data?.error;
        throw new ApiError(res.status, err?.code ?? `http_${res.status}`, err?.message ?? `The server answered ${res.status}.`, err?.fields);
      }
      setDone({ status: data.machineStatus, bumped: data.bumpedBookings, severity });
    } catch (err) {
      setError(err instanceof ApiError ? { text: err.message, fields: err.fields } : { text: 'The report was not sent. Check your connection and try again.' });
    } finally {
      setBusy(false);
    }
  }

  if (done) {
    return (
      <div className="space-y-3" data-testid="fault-sent">
        <p className={`notice ${done.severity === 'stop' ? 'notice-stop' : 'notice-ok'}`} role="status">
          <strong>Thank you — the report is in.</strong>{' '}
          {done.severity === 'stop'
            ? `${machineName} is now out of service for everyone. The stewards have been e-mailed${done.bumped ? `, and ${done.bumped} booking${done.bumped === 1 ? '' : 's'} moved off it` : ''}.`
            : done.severity === 'degraded'
              ? `${machineName} is marked degraded; the stewards have been e-mailed.`
              : 'The stewards will see it on their queue.'}
        </p>
        <p><a href={`/m/${machineCode}`}>Back to {machineName}</a></p>
      </div>
    );
  }

  const f = error?.fields ?? {};
  return (
    <form className="space-y-5" onSubmit={submit} noValidate>
      <fieldset className="space-y-2">
        <legend className="text-lg font-semibold">How serious is it?</legend>
        {f.severity && <p className="text-sm text-[var(--color-stop)]">{f.severity}</p>}
        {FAULT_SEVERITIES.slice().reverse().map((s) => (
          <label key={s} className={`card flex cursor-pointer items-start gap-3 p-3 ${severity === s ? 'outline outline-2 outline-[var(--color-ember)]' : ''}`}>
            <input type="radio" name="severity" value={s} checked={severity === s} onChange={() => setSeverity(s)} className="mt-1 h-5 w-5" />
            <span>
              <span className={`status status-${SEVERITY_TEXT[s].tone}`}>{SEVERITY_TEXT[s].label}</span>
              <span className="mt-1 block text-sm">{SEVERITY_TEXT[s].hint}</span>
            </span>
          </label>
        ))}
      </fieldset>
      <label className="field">
        <span>What happened?</span>
        <input className="input" name="summary" value={summary} onChange={(e) => setSummary(e.target.value)} maxLength={200} required placeholder="e.g. Coolant alarm beeping, tube not firing" aria-invalid={!!f.summary} />
        {f.summary && <span className="text-sm font-normal text-[var(--color-stop)]">{f.summary}</span>}
      </label>
      <label className="field">
        <span>More detail (optional)</span>
        <textarea className="input" name="details" rows={4} value={details} onChange={(e) => setDetails(e.target.value)} maxLength={4000} placeholder="What you were doing, what you saw, smelled or heard." />
      </label>
      <label className="field">
        <span>Photos (optional, up to {MAX_PHOTOS}, {MAX_MB} MB each)</span>
        <input className="input" type="file" name="photos" accept="image/*" multiple onChange={(e) => pick(e.target.files)} />
        <span className="hint font-normal">Location and camera details are removed from photos before they are stored.</span>
        {photos.length > 0 && <span className="hint font-normal">{photos.map((p) => p.name).join(', ')}</span>}
      </label>
      <p aria-live="polite" className={error ? 'notice notice-stop' : 'sr-only'}>{error?.text ?? ''}</p>
      <button type="submit" className="btn btn-primary w-full py-3 text-lg" disabled={busy}>{busy ? 'Sending…' : 'Send the report'}</button>
    </form>
  );
}
