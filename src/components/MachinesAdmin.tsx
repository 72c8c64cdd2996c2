/** Admin › Machines: the machines in use — add one, edit what it is (group, clearance level, tube, optics, cooling), retire it. */
import { useId, useState } from 'react';
import { TUBE_LABELS, TUBE_TYPES, STATUS_TEXT, type MachineRecord } from '@lib/machines-shared';
import { api, ApiError } from './ui/api';

export type AdminMachine = MachineRecord;
interface Group {
  id: string;
  name: string;
}

/** The form holds text as typed; numbers are read on submit so a half-typed value is never lost. */
type Draft = Record<'code' | 'name' | 'groupId' | 'requiredLevel' | 'powerW' | 'tubeType' | 'wavelengthUm' | 'bedWidthMm' | 'bedDepthMm' | 'beamDiameterMm' | 'divergenceMrad' | 'lensFocalMm' | 'coolantType' | 'coolantMinC' | 'coolantMaxC', string>;

const NUMBERS = ['powerW', 'bedWidthMm', 'bedDepthMm', 'beamDiameterMm', 'divergenceMrad', 'lensFocalMm'] as const;

function draftOf(m: AdminMachine | null, groups: Group[]): Draft {
  const t = (v: number | null | undefined) => (v === null || v === undefined ? '' : String(v));
  return {
    code: m?.code ?? '',
    name: m?.name ?? '',
    groupId: m?.groupId ?? groups[0]?.id ?? '',
    requiredLevel: m?.requiredLevel ?? 'basic',
    powerW: t(m?.powerW),
    tubeType: m?.tubeType ?? 'dc_glass',
    wavelengthUm: t(m?.wavelengthUm ?? 10.6),
    bedWidthMm: t(m?.bedWidthMm),
    bedDepthMm: t(m?.bedDepthMm),
    // common defaults for a small CO2 cutter until the manufacturer's figures are entered
    beamDiameterMm: t(m?.beamDiameterMm ?? 6),
    divergenceMrad: t(m?.divergenceMrad ?? 3),
    lensFocalMm: t(m?.lensFocalMm ?? 50.8),
    coolantType: m?.coolantType ?? 'water',
    coolantMinC: t(m?.coolantMinC),
    coolantMaxC: t(m?.coolantMaxC),
  };
}

/** Which beam-diameter figure the admin typed: 1/e (what the formulas use) or 1/e² (what makers usually quote). */
type BeamConvention = 'e' | 'e2';

/** The body for the API, or the first field that is not a number. */
function bodyOf(d: Draft, isNew: boolean, beamAs: BeamConvention = 'e'): { body: Record<string, unknown> } | { field: string } {
  const out: Record<string, unknown> = {
    name: d.name,
    groupId: d.groupId,
    requiredLevel: d.requiredLevel,
    tubeType: d.tubeType,
    wavelengthUm: Number(d.wavelengthUm),
    coolantType: d.coolantType,
  };
  if (isNew) out.code = d.code;
  for (const k of NUMBERS) {
    const n = Number(d[k].replace(',', '.'));
    if (d[k].trim() === '' || !Number.isFinite(n)) return { field: k };
    out[k] = n;
  }
  // the hazard formulas take the 1/e diameter; a maker's 1/e² figure is converted: d(1/e) = d(1/e²) / √2
  if (beamAs === 'e2') out.beamDiameterMm = Math.round((Number(out.beamDiameterMm) / Math.SQRT2) * 100) / 100;
  for (const k of ['coolantMinC', 'coolantMaxC'] as const) {
    const v = d[k].trim().replace(',', '.');
    if (d.coolantType === 'air' || v === '') out[k] = null;
    else if (!Number.isFinite(Number(v))) return { field: k };
    else out[k] = Number(v);
  }
  return { body: out };
}

const LABELS: Record<keyof Draft, string> = {
  code: 'Label code', name: 'Name', groupId: 'Machine group', requiredLevel: 'Clearance level needed', powerW: 'Rated power (W)',
  tubeType: 'Tube', wavelengthUm: 'Wavelength', bedWidthMm: 'Bed width (mm)', bedDepthMm: 'Bed depth (mm)', beamDiameterMm: 'Beam diameter at the output (mm)',
  divergenceMrad: 'Beam divergence (mrad, full angle)', lensFocalMm: 'Lens focal length (mm)', coolantType: 'Cooling', coolantMinC: 'Coolant lowest (°C)', coolantMaxC: 'Coolant highest (°C)',
};

export default function MachinesAdmin({ machines: initial, groups }: { machines: AdminMachine[]; groups: Group[] }) {
  const [machines, setMachines] = useState(initial);
  const [editing, setEditing] = useState<string | 'new' | null>(null);
  const [draft, setDraft] = useState<Draft>(() => draftOf(null, groups));
  const [retiring, setRetiring] = useState<AdminMachine | null>(null);
  const [reason, setReason] = useState('');
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string; fields?: Record<string, string> } | null>(null);
  const [busy, setBusy] = useState(false);
  const [beamAs, setBeamAs] = useState<BeamConvention>('e');
  const ids = useId();
  const groupName = (id: string | null) => groups.find((g) => g.id === id)?.name ?? 'No group: nobody can book it';

  function open(target: AdminMachine | 'new') {
    setRetiring(null);
    setMessage(null);
    setEditing(target === 'new' ? 'new' : target.id);
    setDraft(draftOf(target === 'new' ? null : target, groups));
    setBeamAs('e');
  }

  async function save(e: React.FormEvent) {
    e.preventDefault();
    const isNew = editing === 'new';
    const built = bodyOf(draft, isNew, beamAs);
    if ('field' in built) return setMessage({ tone: 'stop', text: `${LABELS[built.field as keyof Draft]}: enter a number.`, fields: { [built.field]: 'A number.' } });
    setBusy(true);
    try {
      if (isNew) {
        const m = await api<AdminMachine>('/api/machines', { method: 'POST', json: built.body });
        // the rules below and the rest of the site list machines from the server: load the page again, on the new one
        window.location.assign(`/admin/machines?machine=${m.id}&added=1`);
        return;
      }
      const m = await api<AdminMachine>(`/api/machines/${editing}`, { method: 'PATCH', json: built.body });
      setMachines((list) => list.map((x) => (x.id === m.id ? m : x)));
      setEditing(null);
      setMessage({ tone: 'ok', text: `${m.name} saved. The change is in the audit log.` });
    } catch (err) {
      const fields = err instanceof ApiError && err.fields ? err.fields : undefined;
      setMessage({ tone: 'stop', text: fields && err instanceof ApiError && err.code === 'invalid' ? 'Not saved: check the fields marked below.' : err instanceof ApiError ? err.message : 'Not saved.', ...(fields ? { fields } : {}) });
    } finally {
      setBusy(false);
    }
  }

  async function retire(e: React.FormEvent) {
    e.preventDefault();
    if (!retiring) return;
    setBusy(true);
    try {
      const r = await api<{ cancelledBookings: number; closedFaults: number }>(`/api/machines/${retiring.id}/retire`, { method: 'POST', json: { reason } });
      window.location.assign(`/admin/machines?retired=${encodeURIComponent(retiring.name)}&cancelled=${r.cancelledBookings}&faults=${r.closedFaults}`);
    } catch (err) {
      setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'Not retired.', ...(err instanceof ApiError && err.fields ? { fields: err.fields } : {}) });
      setBusy(false);
    }
  }

  const HINTED = new Set<keyof Draft>(['name', 'code', 'groupId', 'powerW', 'beamDiameterMm', 'divergenceMrad', 'lensFocalMm', 'coolantMinC', 'coolantMaxC']);
  const described = (key: keyof Draft) => (HINTED.has(key) || message?.fields?.[key] ? `${ids}-${key}` : undefined);
  const field = (key: keyof Draft, control: React.ReactNode, hint?: string) => (
    <label className="field">
      <span>{LABELS[key]}</span>
      {control}
      {(hint || message?.fields?.[key]) && (
        <small id={`${ids}-${key}`} className={message?.fields?.[key] ? 'font-semibold text-stop' : 'hint'}>{message?.fields?.[key] ?? hint}</small>
      )}
    </label>
  );
  const text = (key: keyof Draft, opts: { inputMode?: 'decimal' | 'numeric'; maxLength?: number; disabled?: boolean } = {}) => (
    <input
      className="input"
      name={key}
      value={draft[key]}
      inputMode={opts.inputMode}
      maxLength={opts.maxLength ?? 80}
      disabled={opts.disabled}
      aria-invalid={message?.fields?.[key] ? true : undefined}
      aria-describedby={described(key)}
      onChange={(e) => setDraft({ ...draft, [key]: e.target.value })}
    />
  );
  const select = (key: keyof Draft, options: [string, string][]) => (
    <select className="input" name={key} value={draft[key]} onChange={(e) => setDraft({ ...draft, [key]: e.target.value })} aria-describedby={described(key)}>
      {options.map(([v, l]) => <option key={v} value={v}>{l}</option>)}
    </select>
  );

  const form = editing && (
    <form className="card space-y-5 p-4" onSubmit={save} aria-label={editing === 'new' ? 'Add a machine' : 'Edit the machine'}>
      <h3 className="text-lg">{editing === 'new' ? 'Add a machine' : `Edit ${machines.find((m) => m.id === editing)?.name ?? ''}`}</h3>
      <div className="grid gap-4 sm:grid-cols-2 lg:grid-cols-3">
        {field('name', text('name'), 'As members see it, e.g. Laser D.')}
        {field('code', text('code', { maxLength: 32, disabled: editing !== 'new' }), editing === 'new' ? 'In the QR label’s address (/m/<code>): 2–32 lower-case letters, digits, dashes. It cannot change later.' : 'Printed on the label: it cannot change.')}
        {field('groupId', select('groupId', groups.map((g) => [g.id, g.name])), 'The clearance that lets a person run it.')}
        {field('requiredLevel', select('requiredLevel', [['basic', 'Basic'], ['advanced', 'Advanced (e.g. a rotary axis fitted)']]))}
        {field('tubeType', select('tubeType', TUBE_TYPES.map((t) => [t, TUBE_LABELS[t]])))}
        {field('powerW', text('powerW', { inputMode: 'decimal' }), 'From the tube’s rating plate.')}
        {field('wavelengthUm', select('wavelengthUm', [['10.6', '10.6 µm'], ['9.6', '9.6 µm']]))}
        {field('bedWidthMm', text('bedWidthMm', { inputMode: 'numeric' }))}
        {field('bedDepthMm', text('bedDepthMm', { inputMode: 'numeric' }))}
        {field('beamDiameterMm', text('beamDiameterMm', { inputMode: 'decimal' }), beamAs === 'e2'
          ? `Typed as the 1/e² figure; saved as 1/e = ÷ √2${Number.isFinite(Number(draft.beamDiameterMm.replace(',', '.'))) && draft.beamDiameterMm.trim() ? ` = ${(Number(draft.beamDiameterMm.replace(',', '.')) / Math.SQRT2).toFixed(2)} mm` : ''}.`
          : 'The 1/e diameter at the output (what the hazard formulas use). From the manufacturer’s manual.')}
        <label className="field">
          <span>The diameter above is the…</span>
          <select className="input" name="beamConvention" value={beamAs} onChange={(e) => setBeamAs(e.target.value as BeamConvention)}>
            <option value="e">1/e diameter (used as typed)</option>
            <option value="e2">1/e² diameter (makers usually quote this; converted ÷ √2)</option>
          </select>
          <small className="hint">Beamwarden stores and uses the 1/e figure.</small>
        </label>
        {field('divergenceMrad', text('divergenceMrad', { inputMode: 'decimal' }), 'For the hazard sheet (NOHD).')}
        {field('lensFocalMm', text('lensFocalMm', { inputMode: 'decimal' }), 'For the hazard sheet (the diffuse reflection after the focus).')}
        {field('coolantType', select('coolantType', [['water', 'Water (a chiller)'], ['air', 'Air']]))}
        {draft.coolantType === 'water' && field('coolantMinC', text('coolantMinC', { inputMode: 'decimal' }), 'Check-in refuses a colder reading. Empty: 15 °C (common practice for glass tubes).')}
        {draft.coolantType === 'water' && field('coolantMaxC', text('coolantMaxC', { inputMode: 'decimal' }), 'Check-in refuses a warmer reading. Empty: 25 °C.')}
      </div>
      <p className="hint">The hazard sheet computes its figures from these values. Have your laser safety officer check them against the manufacturer’s manual before the machine is used.</p>
      <div className="flex flex-wrap gap-3">
        <button className="btn btn-primary" type="submit" disabled={busy}>{editing === 'new' ? 'Add the machine' : 'Save the machine'}</button>
        <button className="btn btn-quiet" type="button" onClick={() => { setEditing(null); setMessage(null); }}>Cancel</button>
      </div>
    </form>
  );

  return (
    <section className="space-y-4" aria-labelledby={`${ids}-h`}>
      <div className="flex flex-wrap items-center justify-between gap-3">
        <h2 id={`${ids}-h`} className="text-xl">Machines in use</h2>
        <button className="btn btn-quiet" type="button" onClick={() => open('new')} disabled={busy || groups.length === 0}>Add a machine</button>
      </div>
      {groups.length === 0 && <p className="notice notice-warn">Create a machine group first (Machine groups): every machine belongs to one.</p>}
      <div role="status" aria-live="polite">{message && !retiring && <p className={`notice notice-${message.tone}`}>{message.text}</p>}</div>
      {editing === 'new' && form}
      <div className="card overflow-x-auto">
        <table className="table">
          <caption className="sr-only">Machines in use</caption>
          <thead>
            <tr>
              <th>Machine</th>
              <th>Clearance</th>
              <th className="hidden md:table-cell">Tube and power</th>
              <th className="hidden md:table-cell">Status</th>
              <th><span className="sr-only">Actions</span></th>
            </tr>
          </thead>
          <tbody>
            {machines.map((m) => (
              <tr key={m.id} data-machine-row={m.code}>
                <td className="font-medium">{m.name}<span className="block text-sm font-normal text-charcoal-soft">/m/{m.code}</span></td>
                <td className="text-sm">{groupName(m.groupId)}{m.requiredLevel === 'advanced' && <span className="block">Advanced level</span>}</td>
                <td className="hidden text-sm md:table-cell">{TUBE_LABELS[m.tubeType]}, {m.powerW} W, {m.wavelengthUm} µm</td>
                <td className="hidden text-sm md:table-cell">{STATUS_TEXT[m.status].label}</td>
                <td className="whitespace-nowrap text-right">
                  <button type="button" className="btn btn-quiet" disabled={busy} onClick={() => open(m)}>Edit<span className="sr-only"> {m.name}</span></button>{' '}
                  <button type="button" className="btn btn-quiet" disabled={busy} onClick={() => { setEditing(null); setMessage(null); setReason(''); setRetiring(m); }}>Retire<span className="sr-only"> {m.name}</span></button>
                </td>
              </tr>
            ))}
            {machines.length === 0 && <tr><td colSpan={5} className="text-center text-charcoal-soft">No machines yet.</td></tr>}
          </tbody>
        </table>
      </div>
      {editing && editing !== 'new' && form}
      {retiring && (
        <form className="card space-y-4 border-stop p-4" onSubmit={retire} aria-label={`Retire ${retiring.name}`}>
          <h3 className="text-lg">Retire {retiring.name}?</h3>
          <p>It leaves the booking calendar, the Floor and its label page, and takes no more bookings. Every reserved booking on it that has not ended is cancelled, the people are e-mailed with your reason, and card holds are released; its open faults are closed as “Machine retired”. Its history stays in the reports and the audit log. This cannot be undone here; its label code is never reused.</p>
          <label className="field">
            <span>Why it is retired</span>
            <textarea className="input" rows={2} maxLength={500} value={reason} onChange={(e) => setReason(e.target.value)} required minLength={3} aria-describedby={`${ids}-reason`} />
            <small id={`${ids}-reason`} className="hint">The people whose bookings are cancelled, and those who reported its open faults, read this.</small>
          </label>
          {message && <p role="alert" className={`notice notice-${message.tone}`}>{message.text}</p>}
          <div className="flex flex-wrap gap-3">
            <button className="btn btn-primary" type="submit" disabled={busy}>Retire {retiring.name}</button>
            <button className="btn btn-quiet" type="button" onClick={() => { setRetiring(null); setMessage(null); }}>Keep it</button>
          </div>
        </form>
      )}
    </section>
  );
}
