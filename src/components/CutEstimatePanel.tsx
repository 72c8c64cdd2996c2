/** Starting cut settings for a machine, material and thickness: always a starting point for a test cut. */
import { useEffect, useState } from 'react';
import { api, ApiError } from './ui/api';

interface Option { id: string; name: string }
interface MachineOption extends Option { powerW: number }
type Estimate =
  | { notOnThisMachine?: undefined; speedMmPerS: number; lineEnergyJPerMm: number; withinReach: boolean; reachMm: number; ruleMaxCutMm: number | null; allowedByRule: boolean; notes: string[]; assumptions: string[] }
  | { notOnThisMachine: true; message: string };

export default function CutEstimatePanel({ machines, materials, machineId }: { machines: MachineOption[]; materials: Option[]; machineId?: string }) {
  const [machine, setMachine] = useState(machineId ?? machines[0]?.id ?? '');
  const [material, setMaterial] = useState(materials[0]?.id ?? '');
  const [thickness, setThickness] = useState('3');
  const [est, setEst] = useState<Estimate | null>(null);
  const [error, setError] = useState<string | null>(null);
  const powerW = machines.find((m) => m.id === machine)?.powerW;

  useEffect(() => {
    if (!machine || !material || !thickness) return;
    const t = setTimeout(async () => {
      try {
        // the machine's own power and its rule for this material (overrides included)
        const p = new URLSearchParams({ machineId: machine, materialId: material, thicknessMm: thickness });
        setEst(await api<Estimate>(`/api/tools/cut-estimate?${p}`));
        setError(null);
      } catch (e) {
        setEst(null);
        setError(e instanceof ApiError ? e.message : 'Could not estimate.');
      }
    }, 250);
    return () => clearTimeout(t);
  }, [machine, material, thickness]);

  return (
    <section className="card min-w-0 space-y-3 p-5" aria-label="Starting cut settings">
      <h2 className="text-xl">Starting cut settings</h2>
      <p className="notice notice-warn text-sm">A starting point for a test cut, never a setting to trust: cut a small test piece first.</p>
      <div className="grid gap-3 sm:grid-cols-3">
        {!machineId && (
          <label className="field min-w-0"><span>Machine</span>
            <select className="input w-full min-w-0" value={machine} onChange={(e) => setMachine(e.target.value)}>{machines.map((m) => <option key={m.id} value={m.id}>{m.name} ({m.powerW} W)</option>)}</select></label>
        )}
        <label className="field min-w-0"><span>Material</span>
          <select className="input w-full min-w-0" value={material} onChange={(e) => setMaterial(e.target.value)}>{materials.map((m) => <option key={m.id} value={m.id}>{m.name}</option>)}</select></label>
        <label className="field min-w-0"><span>Thickness (mm)</span>
          <input className="input w-full min-w-0" type="number" min="0.1" max="100" step="0.1" value={thickness} onChange={(e) => setThickness(e.target.value)} /></label>
      </div>
      <div aria-live="polite">
        {error && <p className="notice notice-stop">{error}</p>}
        {est?.notOnThisMachine && <p className="notice notice-stop" data-testid="not-on-machine">■ {est.message}</p>}
        {est && !est.notOnThisMachine && (
          <>
            <dl className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1">
              <dt className="text-charcoal-soft">Estimated speed</dt><dd className="font-semibold">{est.speedMmPerS} mm/s at full power{powerW ? ` (${powerW} W)` : ''}</dd>
              <dt className="text-charcoal-soft">Line energy</dt><dd>{est.lineEnergyJPerMm} J/mm</dd>
              <dt className="text-charcoal-soft">One pass</dt><dd>{est.withinReach ? `Likely (reach about ${est.reachMm} mm)` : `Probably not: reach about ${est.reachMm} mm — several passes (advice only)`}</dd>
              <dt className="text-charcoal-soft">Rule</dt><dd>{est.ruleMaxCutMm === null ? 'No thickness limit' : `At most ${est.ruleMaxCutMm} mm`}{est.allowedByRule ? '' : ' — this thickness cannot be booked'}</dd>
            </dl>
            {est.notes.map((n) => <p key={n} className={`notice ${est.allowedByRule ? 'notice-warn' : 'notice-stop'} mt-2 text-sm`}>{n}</p>)}
            <details className="mt-2 text-sm"><summary className="cursor-pointer">Assumptions</summary>
              <ul className="mt-1 list-disc pl-5">{est.assumptions.map((a) => <li key={a}>{a}</li>)}</ul></details>
          </>
        )}
      </div>
    </section>
  );
}
