/** Members: screen a chemical formula for halogens, and ask for a new material to be reviewed (with its safety data sheet). */
import { useEffect, useRef, useState } from 'react';
import { MATERIAL_MODES } from '@lib/material-rules';
import { FormulaError, screenMaterial, type ScreenResult } from '@lib/halogen-screen';
import { api, ApiError } from './ui/api';

type Screen = ScreenResult;

export default function MaterialScreener() {
  const [composition, setComposition] = useState('');
  const [name, setName] = useState('');
  const [result, setResult] = useState<Screen | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [sent, setSent] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);
  const formRef = useRef<HTMLFormElement>(null);

  // the same pure module the server uses: the verdict shows as the member types, without a round trip
  useEffect(() => {
    const text = composition.trim();
    if (!text && !name.trim()) { setResult(null); setError(null); return; }
    try {
      setResult(screenMaterial({ name, composition: text || null }));
      setError(null);
    } catch (e) {
      setResult(null);
      setError(e instanceof FormulaError ? e.message : 'Could not screen the formula.');
    }
  }, [composition, name]);

  async function submit(e: React.FormEvent<HTMLFormElement>) {
    e.preventDefault();
    setBusy(true);
    setSent(null);
    try {
      const r = await api<{ name: string; screenVerdict: string }>('/api/material-requests', { method: 'POST', body: new FormData(e.currentTarget) });
      setSent({ tone: 'ok', text: `Sent: a steward will review ${r.name}. You will get an e-mail with the decision.` });
      formRef.current?.reset();
      setComposition('');
      setName('');
    } catch (err) {
      setSent({ tone: 'stop', text: err instanceof ApiError ? err.message : 'The request was not sent.' });
    } finally {
      setBusy(false);
    }
  }

  return (
    <form ref={formRef} className="card space-y-4 p-5" onSubmit={(e) => void submit(e)} aria-label="Screen or request a material">
      <label className="field min-w-0">
        <span>Material name (as sold)</span>
        <input className="input w-full min-w-0" name="name" value={name} onChange={(e) => setName(e.target.value)} maxLength={120} placeholder="e.g. vinyl sheet, EVA foam, FR-4" autoComplete="off" />
        <small className="hint">Common names and abbreviations are recognised: PVC, PTFE, FR-4, ABS, nylon…</small>
      </label>
      <label className="field min-w-0">
        <span>Chemical formula (from the safety data sheet)</span>
        <input className="input w-full min-w-0 font-mono" name="composition" value={composition} onChange={(e) => setComposition(e.target.value)} placeholder="(C5H8O2)n" maxLength={200} autoComplete="off" spellCheck={false} />
        <small className="hint">Repeat units in brackets with n, e.g. (C2H3Cl)n; mixtures with +; hydrates with ·; simple SMILES such as C=CCl.</small>
      </label>
      <div aria-live="polite" data-testid="screen-result">
        {error && <p className="notice notice-stop">{error}</p>}
        {result && (
          <div className={`notice ${result.verdict === 'blocked' ? 'notice-stop' : 'notice-warn'}`}>
            <p className="font-semibold">{result.verdict === 'blocked' ? '■ Blocked' : '▲ Needs a steward\'s review'}{result.matchedName ? ` — read as ${result.matchedName}` : ''}</p>
            <p>{result.reason}</p>
            {result.warnings.map((w) => <p key={w} className="text-sm">{w}</p>)}
            <p className="mt-1 font-mono text-sm">{Object.entries(result.elements).map(([el, n]) => `${el} ${n}`).join(' · ')}</p>
          </div>
        )}
      </div>
      <details className="space-y-3">
        <summary className="cursor-pointer font-semibold">Ask for this material to be reviewed</summary>
        <div className="mt-3 grid gap-3 md:grid-cols-2">
          <label className="field min-w-0"><span>Supplier</span><input className="input w-full min-w-0" name="supplier" required maxLength={120} /></label>
          <label className="field min-w-0"><span>Thickness (mm)</span><input className="input w-full min-w-0" name="thicknessMm" type="number" step="0.1" min="0.1" max="100" required /></label>
          <label className="field min-w-0"><span>Intended use</span>
            <select className="input w-full min-w-0" name="mode" defaultValue="cut">{MATERIAL_MODES.map((m) => <option key={m} value={m}>{m}</option>)}</select></label>
          <label className="field min-w-0 md:col-span-2"><span>Safety data sheet (PDF, at most 10 MB)</span>
            <input className="input w-full min-w-0" name="sds" type="file" accept="application/pdf,.pdf" required /></label>
        </div>
        <button type="submit" className="btn btn-primary mt-3" disabled={busy}>Send for review</button>
      </details>
      {sent && <p role="status" className={`notice notice-${sent.tone}`}>{sent.text}</p>}
    </form>
  );
}
