/** Admin › Material rules: a sortable, filterable table of the catalogue, an edit form, and per-machine overrides. Every save is audited. */
import { siteFormat } from '@lib/format';
import { useCallback, useEffect, useMemo, useState } from 'react';
import { MATERIAL_CATEGORIES, MATERIAL_MODES, MATERIAL_RULES, RULE_TEXT, type MaterialMode, type MaterialRule } from '@lib/material-rules';
import { screenMaterial, type ScreenResult } from '@lib/halogen-screen';
import { api, ApiError } from './ui/api';

interface Material {
  id: string; name: string; category: string; composition: string[]; rule: MaterialRule; reason: string; modes: MaterialMode[];
  maxCutMm: number | null; densityGPerCm3: number | null; heatOfGasificationJPerG: number | null; cutEfficiency: number | null;
  soldBySpace: boolean; sheetSku: string | null; sheetPriceMinor: number | null; sheetName: string | null; sheetCurrency: string | null;
  sheetSize: string | null; updatedAt: string;
}
/** A sheet of the price version in force (Pricing): the one source of sheet prices. */
interface Sheet { sku: string; name: string; priceMinor: number; currency: string }
/** What the form edits and sends: the material's own fields (the price is the price version's). */
type Draft = Omit<Material, 'id' | 'updatedAt' | 'sheetPriceMinor' | 'sheetName' | 'sheetCurrency'> & { id?: string };
interface Machine { id: string; code: string; name: string; powerW: number }
interface Override { materialId: string; machineId: string; rule: MaterialRule | null; modes: MaterialMode[] | null; maxCutMm: number | null; note: string | null }
interface Effective { rule: MaterialRule; modes: MaterialMode[]; maxCutMm: number | null; maxCutBasis: string; reachMm: number | null; halogenBlocked: boolean }
interface Violation { materialId: string; name: string; machineId: string | null; storedRule: MaterialRule; reason: string }
interface Data { machines: Machine[]; materials: Material[]; overrides: Override[]; effective: Record<string, Record<string, Effective>>; violations: Violation[]; sheets: Sheet[] }
type Sort = 'name' | 'category' | 'rule' | 'updated';

const RULE_ORDER: Record<MaterialRule, number> = { allowed: 0, limited: 1, blocked: 2 };
const EMPTY: Omit<Draft, 'id'> = {
  name: '', category: 'plastic', composition: [], rule: 'allowed', reason: '', modes: ['cut', 'engrave', 'score'], maxCutMm: null,
  densityGPerCm3: null, heatOfGasificationJPerG: null, cutEfficiency: null, soldBySpace: false, sheetSku: null, sheetSize: null,
};
const toDraft = (m: Material): Draft => {
  const { updatedAt: _u, sheetPriceMinor: _p, sheetName: _n, sheetCurrency: _c, ...rest } = m;
  return rest;
};

const FORM_FIELDS = ['name', 'rule', 'composition', 'reason', 'modes', 'maxCutMm', 'densityGPerCm3', 'heatOfGasificationJPerG', 'cutEfficiency', 'sheetSku', 'sheetPriceMinor'];
const numOrNull = (s: string) => (s.trim() === '' ? null : Number(s));

export default function MaterialRulesAdmin({ locale, timeZone }: { locale: string; timeZone: string }) {
  const formatMoney = (minor: number, currency: string) => siteFormat(locale, timeZone).money(minor, currency);
  const [data, setData] = useState<Data | null>(null);
  const [q, setQ] = useState('');
  const [ruleFilter, setRuleFilter] = useState<MaterialRule | ''>('');
  const [catFilter, setCatFilter] = useState('');
  const [sort, setSort] = useState<Sort>('name');
  const [dir, setDir] = useState<'asc' | 'desc'>('asc');
  const [editing, setEditing] = useState<Draft | null>(null);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [fieldErrors, setFieldErrors] = useState<Record<string, string>>({});
  const [busy, setBusy] = useState(false);

  const load = useCallback(async () => {
    try {
      setData(await api<Data>('/api/material-rules'));
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load the material rules.' });
    }
  }, []);
  useEffect(() => void load(), [load]);

  const rows = useMemo(() => {
    if (!data) return [];
    const needle = q.trim().toLowerCase();
    const list = data.materials.filter(
      (m) => (!needle || m.name.toLowerCase().includes(needle) || m.composition.join(' ').toLowerCase().includes(needle)) &&
        (!ruleFilter || m.rule === ruleFilter) && (!catFilter || m.category === catFilter),
    );
    const key = (m: Material): string | number =>
      sort === 'name' ? m.name.toLowerCase() : sort === 'category' ? m.category : sort === 'rule' ? RULE_ORDER[m.rule] : m.updatedAt;
    list.sort((a, b) => {
      const x = key(a), y = key(b);
      const c = x < y ? -1 : x > y ? 1 : a.name.localeCompare(b.name);
      return dir === 'asc' ? c : -c;
    });
    return list;
  }, [data, q, ruleFilter, catFilter, sort, dir]);

  function sortBy(c: Sort) {
    if (sort === c) setDir(dir === 'asc' ? 'desc' : 'asc');
    else { setSort(c); setDir('asc'); }
  }
  const mark = (c: Sort) => (sort === c ? (dir === 'asc' ? ' ▲' : ' ▼') : '');
  const aria = (c: Sort) => (sort === c ? (dir === 'asc' ? 'ascending' : 'descending') : 'none');

  async function save() {
    if (!editing) return;
    setBusy(true);
    setFieldErrors({});
    const { id, ...body } = editing;
    try {
      const saved = await api<Material>(id ? `/api/material-rules/${id}` : '/api/material-rules', { method: id ? 'PUT' : 'POST', json: body });
      setMessage({ tone: 'ok', text: `Saved ${saved.name} (${RULE_TEXT[saved.rule].label}). The change is in the audit log.` });
      setEditing(null);
      await load();
    } catch (e) {
      if (e instanceof ApiError) {
        setFieldErrors(e.fields ?? {});
        setMessage({ tone: 'stop', text: e.message });
      } else setMessage({ tone: 'stop', text: 'The change was not saved.' });
    } finally {
      setBusy(false);
    }
  }

  /** Saves an override; resolves to the refusal's message (shown beside that machine's row) or null. */
  async function saveOverride(materialId: string, machine: Machine, o: Omit<Override, 'materialId' | 'machineId'> | null): Promise<string | null> {
    setBusy(true);
    try {
      if (o) await api(`/api/material-rules/${materialId}/overrides/${machine.id}`, { method: 'PUT', json: o });
      else await api(`/api/material-rules/${materialId}/overrides/${machine.id}`, { method: 'DELETE' });
      setMessage({ tone: 'ok', text: `${o ? 'Saved' : 'Removed'} the override on ${machine.name}.` });
      await load();
      return null;
    } catch (e) {
      const text = e instanceof ApiError ? e.message : 'The override was not saved.';
      setMessage({ tone: 'stop', text: `Not saved on ${machine.name}: ${text}` });
      return text;
    } finally {
      setBusy(false);
    }
  }

  const set = <K extends keyof typeof EMPTY>(k: K, v: (typeof EMPTY)[K]) => setEditing((e) => (e ? { ...e, [k]: v } : e));
  const err = (k: string) => fieldErrors[k] && <span className="text-sm text-[var(--color-stop)]">{fieldErrors[k]}</span>;

  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-end gap-3">
        <label className="field min-w-56 flex-1">
          <span>Search name or formula</span>
          <input className="input" type="search" value={q} onChange={(e) => setQ(e.target.value)} maxLength={100} />
        </label>
        <label className="field">
          <span>Rule</span>
          <select className="input" value={ruleFilter} onChange={(e) => setRuleFilter(e.target.value as MaterialRule | '')}>
            <option value="">Any rule</option>
            {MATERIAL_RULES.map((r) => <option key={r} value={r}>{RULE_TEXT[r].label}</option>)}
          </select>
        </label>
        <label className="field">
          <span>Category</span>
          <select className="input" value={catFilter} onChange={(e) => setCatFilter(e.target.value)}>
            <option value="">Any category</option>
            {MATERIAL_CATEGORIES.map((c) => <option key={c} value={c}>{c}</option>)}
          </select>
        </label>
        <button type="button" className="btn btn-primary" onClick={() => { setEditing({ ...EMPTY }); setFieldErrors({}); }}>New material</button>
      </div>
      <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      {data && data.violations.length > 0 && (
        <section className="notice notice-stop" aria-labelledby="h-violations" data-testid="halogen-violations">
          <h2 id="h-violations" className="font-semibold">■ Entries that break the halogen rule — treated as blocked until corrected</h2>
          <ul className="mt-1 list-disc pl-5 text-sm">
            {data.violations.map((v) => (
              <li key={`${v.materialId}-${v.machineId ?? ''}`}>
                <strong>{v.name}</strong>{v.machineId ? ` (override on ${data.machines.find((k) => k.id === v.machineId)?.name ?? 'a machine'})` : ''} is stored as {v.storedRule}, but {v.reason} Set it to blocked{v.machineId ? ' or remove the override' : ''}.
              </li>
            ))}
          </ul>
        </section>
      )}

      {editing && (
        <form className="card space-y-4 p-5" aria-label={editing.id ? `Edit ${editing.name}` : 'New material'} onSubmit={(e) => { e.preventDefault(); void save(); }}>
          <h2 className="text-xl">{editing.id ? `Edit ${editing.name}` : 'New material'}</h2>
          <div className="grid gap-3 md:grid-cols-2">
            <label className="field"><span>Name</span><input className="input" value={editing.name} onChange={(e) => set('name', e.target.value)} required maxLength={120} />{err('name')}</label>
            <label className="field"><span>Category</span>
              <select className="input" value={editing.category} onChange={(e) => set('category', e.target.value)}>
                {MATERIAL_CATEGORIES.map((c) => <option key={c} value={c}>{c}</option>)}
              </select></label>
            <label className="field"><span>Rule</span>
              <select className="input" aria-label="Rule" value={editing.rule} onChange={(e) => set('rule', e.target.value as MaterialRule)} aria-invalid={fieldErrors.rule ? true : undefined}>
                {MATERIAL_RULES.map((r) => <option key={r} value={r}>{RULE_TEXT[r].label}</option>)}
              </select>{err('rule')}</label>
            <label className="field"><span>Composition (formulas, separated by ;)</span>
              <input className="input" value={editing.composition.join('; ')} onChange={(e) => set('composition', e.target.value.split(';').map((s) => s.trim()).filter(Boolean))} placeholder="(C5H8O2)n" aria-invalid={fieldErrors.composition ? true : undefined} />{err('composition')}</label>
            <ScreenHint name={editing.name} composition={editing.composition} rule={editing.rule} />
            <label className="field md:col-span-2"><span>Reason members read</span>
              <textarea className="input" rows={2} value={editing.reason} onChange={(e) => set('reason', e.target.value)} required maxLength={1000} />{err('reason')}</label>
            <fieldset className="field">
              <legend className="font-semibold">Allowed modes</legend>
              <div className="flex gap-4">
                {MATERIAL_MODES.map((m) => (
                  <label key={m} className="inline-flex min-h-8 items-center gap-1.5">
                    <input type="checkbox" className="h-4 w-4 accent-[var(--color-ember)]" checked={editing.modes.includes(m)} disabled={editing.rule === 'blocked'}
                      onChange={(e) => set('modes', e.target.checked ? [...editing.modes, m] : editing.modes.filter((x) => x !== m))} />{m}
                  </label>
                ))}
              </div>{err('modes')}
            </fieldset>
            <label className="field"><span>Maximum cut thickness the rule allows, any machine (mm; empty = no limit — each machine's reach is shown as advice)</span>
              <input className="input" type="number" step="0.1" min="0" value={editing.maxCutMm ?? ''} onChange={(e) => set('maxCutMm', numOrNull(e.target.value))} />{err('maxCutMm')}</label>
          </div>
          <fieldset className="grid gap-3 rounded-lg border border-line p-3 md:grid-cols-3">
            <legend className="px-1 font-semibold">Starting cut settings (calibration)</legend>
            <label className="field"><span>Density (g/cm³)</span><input className="input" type="number" step="0.001" min="0" value={editing.densityGPerCm3 ?? ''} onChange={(e) => set('densityGPerCm3', numOrNull(e.target.value))} />{err('densityGPerCm3')}</label>
            <label className="field"><span>Heat of gasification (J/g)</span><input className="input" type="number" step="1" min="0" value={editing.heatOfGasificationJPerG ?? ''} onChange={(e) => set('heatOfGasificationJPerG', numOrNull(e.target.value))} />{err('heatOfGasificationJPerG')}</label>
            <label className="field"><span>Cut efficiency η (0–1)</span><input className="input" type="number" step="0.01" min="0" max="1" value={editing.cutEfficiency ?? ''} onChange={(e) => set('cutEfficiency', numOrNull(e.target.value))} />{err('cutEfficiency')}</label>
            <p className="hint md:col-span-3">Calibrate η from a test cut: η = measured speed ÷ the ideal speed (η = 1). Typical 0.15–0.4 for acrylic, lower for wood.</p>
          </fieldset>
          <fieldset className="grid min-w-0 gap-3 rounded-lg border border-line p-3 md:grid-cols-3">
            <legend className="px-1 font-semibold">Sold by the space</legend>
            <label className="inline-flex min-h-8 items-center gap-2"><input type="checkbox" className="h-4 w-4 accent-[var(--color-ember)]" checked={editing.soldBySpace} onChange={(e) => set('soldBySpace', e.target.checked)} />The space sells this by the sheet</label>
            <SheetField money={formatMoney} sheets={data?.sheets ?? []} sku={editing.sheetSku} sold={editing.soldBySpace} onChange={(v) => set('sheetSku', v)} error={<>{err('sheetSku')}{err('sheetPriceMinor')}</>} />
            <label className="field"><span>Sheet size</span><input className="input" value={editing.sheetSize ?? ''} onChange={(e) => set('sheetSize', e.target.value || null)} maxLength={60} /></label>
          </fieldset>
          {Object.keys(fieldErrors).some((k) => !FORM_FIELDS.includes(k)) && (
            <ul className="notice notice-stop text-sm">{Object.entries(fieldErrors).filter(([k]) => !FORM_FIELDS.includes(k)).map(([k, v]) => <li key={k}>{k}: {v}</li>)}</ul>
          )}
          <div className="flex gap-3">
            <button type="submit" className="btn btn-primary" disabled={busy}>Save rule</button>
            <button type="button" className="btn btn-quiet" onClick={() => setEditing(null)}>Cancel</button>
          </div>
          {editing.id && data && (
            <Overrides materialId={editing.id} machines={data.machines} overrides={data.overrides} effective={data.effective[editing.id] ?? {}} busy={busy} onSave={saveOverride} />
          )}
        </form>
      )}

      <div className="card overflow-x-auto">
        <table className="table" aria-busy={!data}>
          <caption className="sr-only">Material rules</caption>
          <thead>
            <tr>
              <th aria-sort={aria('name')}><button type="button" className="font-semibold" onClick={() => sortBy('name')}>Material{mark('name')}</button></th>
              <th className="hidden md:table-cell" aria-sort={aria('category')}><button type="button" className="font-semibold" onClick={() => sortBy('category')}>Category{mark('category')}</button></th>
              <th aria-sort={aria('rule')}><button type="button" className="font-semibold" onClick={() => sortBy('rule')}>Rule{mark('rule')}</button></th>
              <th className="hidden lg:table-cell">Modes</th>
              <th className="hidden lg:table-cell">Cut limit by machine (reach is advice)</th>
              <th className="hidden md:table-cell">Sheet</th>
              <th><span className="sr-only">Edit</span></th>
            </tr>
          </thead>
          <tbody>
            {rows.map((m) => (
              <tr key={m.id} data-material={m.name}>
                <td>
                  <span className="font-medium">{m.name}</span>
                  <span className="block font-mono text-xs text-charcoal-soft">{m.composition.join(' + ')}</span>
                  <span className="block text-sm text-charcoal-soft">{m.reason}</span>
                </td>
                <td className="hidden md:table-cell">{m.category}</td>
                <td><span className={`status status-${RULE_TEXT[m.rule].tone}`}><span aria-hidden="true">{RULE_TEXT[m.rule].icon}</span>{RULE_TEXT[m.rule].label}</span></td>
                <td className="hidden lg:table-cell">{m.modes.join(', ') || '—'}</td>
                <td className="hidden text-sm lg:table-cell">
                  {data?.machines.map((k) => {
                    const e = data.effective[m.id]?.[k.id];
                    return <span key={k.id} className="block whitespace-nowrap">{k.name}: {!e || e.rule === 'blocked' ? (e?.halogenBlocked ? 'blocked (halogen)' : 'blocked') : e.modes.includes('cut') ? `${e.maxCutMm !== null ? `≤ ${e.maxCutMm} mm` : 'no limit'}${e.reachMm !== null ? ` · reach ≈ ${e.reachMm} mm` : ''}` : 'no cutting'}{e?.maxCutBasis === 'override' || data.overrides.some((o) => o.materialId === m.id && o.machineId === k.id) ? ' *' : ''}</span>;
                  })}
                </td>
                <td className="hidden text-sm md:table-cell" data-sheet-price>{m.soldBySpace ? (m.sheetPriceMinor !== null && m.sheetCurrency ? <>{formatMoney(m.sheetPriceMinor, m.sheetCurrency)}<span className="block text-charcoal-soft">{m.sheetSize}</span></> : <span className="text-[var(--color-stop)]">Not in the price list: edit to choose its sheet</span>) : '—'}</td>
                <td><button type="button" className="btn btn-quiet" aria-label={`Edit ${m.name}`} onClick={() => { setEditing(toDraft(m)); setFieldErrors({}); window.scrollTo({ top: 0 }); }}>Edit</button></td>
              </tr>
            ))}
            {data && rows.length === 0 && <tr><td colSpan={7} className="text-center text-charcoal-soft">No material matches.</td></tr>}
          </tbody>
        </table>
      </div>
      <p className="hint">{data ? `${rows.length} of ${data.materials.length} materials. * a per-machine override applies.` : 'Loading…'}</p>
    </div>
  );
}

function Overrides({ materialId, machines, overrides, effective, busy, onSave }: {
  materialId: string; machines: Machine[]; overrides: Override[]; effective: Record<string, Effective>; busy: boolean;
  onSave: (materialId: string, machine: Machine, o: Omit<Override, 'materialId' | 'machineId'> | null) => Promise<string | null>;
}) {
  return (
    <section className="space-y-3 border-t border-line pt-4" aria-label="Per-machine overrides">
      <h3 className="text-lg">Per-machine overrides</h3>
      <p className="hint">Leave a field empty to keep the material's own value on that machine.</p>
      {machines.map((k) => (
        <OverrideRow key={k.id} machine={k} existing={overrides.find((o) => o.materialId === materialId && o.machineId === k.id) ?? null}
          effective={effective[k.id]} busy={busy} onSave={(o) => onSave(materialId, k, o)} />
      ))}
    </section>
  );
}

function OverrideRow({ machine, existing, effective, busy, onSave }: {
  machine: Machine; existing: Override | null; effective: Effective | undefined; busy: boolean;
  onSave: (o: Omit<Override, 'materialId' | 'machineId'> | null) => Promise<string | null>;
}) {
  const [refusal, setRefusal] = useState<string | null>(null);
  const [rule, setRule] = useState<MaterialRule | ''>(existing?.rule ?? '');
  const [modes, setModes] = useState<MaterialMode[] | null>(existing?.modes ?? null);
  const [max, setMax] = useState(existing?.maxCutMm?.toString() ?? '');
  const [note, setNote] = useState(existing?.note ?? '');
  return (
    <div className="grid items-end gap-2 rounded-lg border border-line p-3 md:grid-cols-[8rem_9rem_1fr_7rem_1fr_auto]" data-override={machine.name}>
      <div className="font-medium">{machine.name}<span className="block text-xs text-charcoal-soft">now: {effective ? `${effective.rule}${effective.maxCutMm !== null ? `, ≤ ${effective.maxCutMm} mm` : ''}` : '—'}</span></div>
      <label className="field"><span className="text-sm">Rule</span>
        <select className="input" aria-label={`Rule on ${machine.name}`} value={rule} onChange={(e) => setRule(e.target.value as MaterialRule | '')}>
          <option value="">(material's)</option>
          {MATERIAL_RULES.map((r) => <option key={r} value={r}>{RULE_TEXT[r].label}</option>)}
        </select></label>
      <fieldset className="flex flex-wrap items-center gap-3 text-sm">
        <legend className="sr-only">Modes on {machine.name}</legend>
        <label className="inline-flex items-center gap-1"><input type="checkbox" checked={modes !== null} onChange={(e) => setModes(e.target.checked ? [] : null)} />own modes:</label>
        {MATERIAL_MODES.map((m) => (
          <label key={m} className="inline-flex items-center gap-1"><input type="checkbox" disabled={modes === null} checked={modes?.includes(m) ?? false}
            onChange={(e) => setModes((cur) => (cur ? (e.target.checked ? [...cur, m] : cur.filter((x) => x !== m)) : cur))} />{m}</label>
        ))}
      </fieldset>
      <label className="field"><span className="text-sm">Max cut (mm)</span><input className="input" type="number" step="0.1" min="0" value={max} onChange={(e) => setMax(e.target.value)} /></label>
      <label className="field"><span className="text-sm">Note members read</span><input className="input" value={note} maxLength={500} onChange={(e) => setNote(e.target.value)} /></label>
      <div className="flex gap-2">
        <button type="button" className="btn btn-quiet" disabled={busy} onClick={async () => setRefusal(await onSave({ rule: rule || null, modes, maxCutMm: numOrNull(max), note: note.trim() || null }))}>Save</button>
        {existing && <button type="button" className="btn btn-quiet" disabled={busy} onClick={async () => setRefusal(await onSave(null))}>Remove</button>}
      </div>
      {refusal && <p role="alert" className="notice notice-stop text-sm md:col-span-6">■ Not saved: {refusal}</p>}
    </div>
  );
}

/**
 * The sheet a sold material is sold as: chosen from the price version in force, whose price (in major units) is
 * shown here and charged at check-out. The price itself is changed on Pricing, as a new price version.
 */
function SheetField(p: { money: (minor: number, currency: string) => string; sheets: Sheet[]; sku: string | null; sold: boolean; onChange: (sku: string | null) => void; error: React.ReactNode }) {
  const chosen = p.sheets.find((s) => s.sku === p.sku) ?? null;
  return (
    <div className="field min-w-0">
      <label className="field min-w-0"><span>Sheet in the price list</span>
        <select className="input w-full min-w-0" value={p.sku ?? ''} disabled={!p.sold} onChange={(e) => p.onChange(e.target.value || null)} aria-describedby="sheet-price-now">
          <option value="">{p.sold ? 'Choose a sheet' : '(not sold)'}</option>
          {p.sku && !chosen && <option value={p.sku}>{p.sku} (not in the price list in force)</option>}
          {p.sheets.map((s) => <option key={s.sku} value={s.sku}>{s.name} ({s.sku})</option>)}
        </select></label>
      <p id="sheet-price-now" className="hint" data-testid="sheet-price">
        {chosen ? <>Price now: <strong className="text-charcoal">{p.money(chosen.priceMinor, chosen.currency)}</strong> a sheet. </> : null}
        Sheet prices are set on <a href="/admin/pricing">Pricing</a> (a new price version); members pay that price at check-out.
      </p>
      {p.error}
    </div>
  );
}

/** The halogen screen of what the admin is typing (the same pure module the server uses), so a refusal is no surprise. */
function ScreenHint({ name, composition, rule }: { name: string; composition: string[]; rule: MaterialRule }) {
  let r: ScreenResult | null = null;
  let problem: string | null = null;
  try {
    if (name.trim() || composition.length) r = screenMaterial({ name, composition });
  } catch (e) {
    problem = e instanceof Error ? e.message : 'The formula cannot be read.';
  }
  if (!r && !problem) return null;
  const halogen = r && r.halogens.length > 0;
  return (
    <p className={`notice text-sm md:col-span-2 ${problem || (halogen && rule !== 'blocked') ? 'notice-stop' : halogen || r?.verdict === 'blocked' ? 'notice-warn' : 'notice-ok'}`} data-testid="rule-screen" aria-live="polite">
      {problem
        ? `Screening: ${problem}`
        : halogen
          ? `Screening: carries ${r!.halogens.join(', ')}${r!.matchedName ? ` (read as ${r!.matchedName})` : ''} — it can only be saved as blocked.`
          : r!.verdict === 'blocked'
            ? `Screening: ${r!.reason}`
            : `Screening: no halogen found${r!.matchedName ? ` (read as ${r!.matchedName})` : ''}.${(r!.elements.N ?? 0) > 0 ? ' It carries nitrogen: limited, with the fume reason, is the usual rule.' : ''}`}
    </p>
  );
}
