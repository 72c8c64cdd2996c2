/**
 * The booking form's materials: pick what goes in the machine, its thickness and the mode, and see at once the
 * material's rule and reason, and whether this machine takes it (the same check the booking runs on the server).
 */
import { useEffect, useState } from 'react';
import { useQuery } from '@tanstack/react-query';
import { MATERIAL_MODES, RULE_TEXT, type MaterialMode, type MaterialRule } from '@lib/material-rules';
import { api, ApiError } from './ui/api';
import { MATERIALS_HINT, newRow, type MaterialRow } from './booking-material-rows';

interface Catalogue {
  id: string;
  name: string;
  rule: MaterialRule;
  reason: string;
  modes: MaterialMode[];
}

export type RowVerdict = { state: 'checking' } | { state: 'ok'; warnings: string[] } | { state: 'refused'; code: string; message: string } | { state: 'unknown' };

export default function BookingMaterials(p: {
  machineId: string;
  rows: MaterialRow[];
  onChange: (rows: MaterialRow[]) => void;
  onVerdicts: (refused: boolean) => void;
}) {
  const catalogue = useQuery({ queryKey: ['materials'], queryFn: () => api<Catalogue[]>('/api/materials'), staleTime: 10_000 });
  const [verdicts, setVerdicts] = useState<Record<number, RowVerdict>>({});
  const list = catalogue.data ?? [];

  const set = (key: number, patch: Partial<MaterialRow>) => p.onChange(p.rows.map((r) => (r.key === key ? { ...r, ...patch } : r)));

  // check each chosen row against this machine's rules (debounced), as the booking itself will
  const sig = JSON.stringify([p.machineId, p.rows.map((r) => [r.key, r.materialId, r.thicknessMm, r.mode]), catalogue.dataUpdatedAt]);
  useEffect(() => {
    let live = true;
    const rows = p.rows.filter((r) => r.materialId && p.machineId);
    setVerdicts(Object.fromEntries(rows.map((r) => [r.key, { state: 'checking' } as RowVerdict])));
    const t = setTimeout(async () => {
      const out: Record<number, RowVerdict> = {};
      for (const r of rows) {
        const thickness = Number(r.thicknessMm);
        if (!(thickness > 0 && thickness <= 100)) {
          out[r.key] = { state: 'refused', code: 'invalid', message: 'Thickness must be above 0 mm and at most 100 mm.' };
          continue;
        }
        try {
          const res = await api<{ ok: true; warnings?: string[] }>('/api/tools/check-materials', { method: 'POST', json: { machineId: p.machineId, materials: [{ materialId: r.materialId, thicknessMm: thickness, mode: r.mode }] } });
          out[r.key] = { state: 'ok', warnings: res.warnings ?? [] };
        } catch (e) {
          out[r.key] = e instanceof ApiError && e.status === 422 ? { state: 'refused', code: e.code, message: e.message } : { state: 'unknown' };
        }
      }
      if (!live) return;
      setVerdicts(out);
      p.onVerdicts(Object.values(out).some((v) => v.state === 'refused'));
    }, 250);
    return () => {
      live = false;
      clearTimeout(t);
    };
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [sig]);

  return (
    <fieldset className="min-w-0 space-y-3 rounded-lg border border-line p-3" aria-label="Materials">
      <legend className="px-1 font-semibold">Materials</legend>
      <p className="hint">{MATERIALS_HINT}</p>
      {catalogue.isError && <p className="notice notice-warn text-sm">The material list could not be loaded; the booking still checks your materials.</p>}
      {p.rows.map((r, i) => {
        const m = list.find((x) => x.id === r.materialId);
        const v = verdicts[r.key];
        const rt = m ? RULE_TEXT[m.rule] : null;
        return (
          <div key={r.key} className="min-w-0 space-y-2 rounded-md bg-paper-deep/40 p-2" data-material-row={i}>
            <div className="grid min-w-0 grid-cols-2 gap-2 sm:grid-cols-[minmax(0,1fr)_8rem_8rem_auto] sm:items-end">
              <label className="field col-span-2 min-w-0 sm:col-span-1">
                <span>Material</span>
                <select className="input w-full min-w-0" value={r.materialId} onChange={(e) => set(r.key, { materialId: e.target.value })} aria-label={`Material ${i + 1}`}>
                  <option value="">Choose a material…</option>
                  {list.map((x) => <option key={x.id} value={x.id}>{x.name}{x.rule === 'blocked' ? ' (blocked)' : x.rule === 'limited' ? ' (limited)' : ''}</option>)}
                </select>
              </label>
              <label className="field min-w-0">
                <span>Thickness (mm)</span>
                <input className="input w-full min-w-0" type="number" inputMode="decimal" min="0.1" max="100" step="0.1" value={r.thicknessMm} onChange={(e) => set(r.key, { thicknessMm: e.target.value })} aria-label={`Thickness ${i + 1} in mm`} />
              </label>
              <label className="field min-w-0">
                <span>Mode</span>
                <select className="input w-full min-w-0" value={r.mode} onChange={(e) => set(r.key, { mode: e.target.value as MaterialMode })} aria-label={`Mode ${i + 1}`}>
                  {MATERIAL_MODES.map((x) => <option key={x} value={x}>{x}</option>)}
                </select>
              </label>
              <button type="button" className="btn btn-quiet col-span-2 sm:col-span-1" onClick={() => p.onChange(p.rows.filter((x) => x.key !== r.key))} aria-label={`Remove material ${i + 1}`}>Remove</button>
            </div>
            {m && rt && (
              <div className="text-sm" data-testid="material-verdict" aria-live="polite">
                <p><span className={`status status-${rt.tone}`}>{rt.icon} {rt.label}</span> {v?.state === 'refused' ? null : m.reason}</p>
                {v?.state === 'checking' && <p className="hint mt-1">Checking this machine’s rules…</p>}
                {v?.state === 'ok' && <p className="mt-1 text-[var(--color-ok)]">✓ Fine on this machine as {r.mode} at {r.thicknessMm} mm.</p>}
                {v?.state === 'ok' && v.warnings.map((w) => <p key={w} className="notice notice-warn mt-1" data-testid="material-advice">▲ {w}</p>)}
                {v?.state === 'refused' && <p className="notice notice-stop mt-1" role="alert"><strong>Not on this machine:</strong> {v.message}</p>}
              </div>
            )}
          </div>
        );
      })}
      <button type="button" className="btn btn-quiet" onClick={() => p.onChange([...p.rows, newRow()])}>+ Add a material</button>
    </fieldset>
  );
}
