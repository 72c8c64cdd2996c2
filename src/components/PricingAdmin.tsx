/** Admin › Pricing: a change is a new price version with an effective date; every version stays visible. */
import { formatMinor, parseMajor, siteFormat } from '@lib/format';
import { useState, type FormEvent } from 'react';
import { TIERS, TIER_LABELS, type Tier } from '@lib/vocabulary';
import type { Json } from '@lib/json';
import type { Material, PriceVersion } from '@lib/pricing';
import { api, ApiError } from './ui/api';

export type VersionView = Json<PriceVersion>;

interface Props {
  machines: { id: string; name: string }[];
  versions: VersionView[];
  currentId: string | null;
  timeZone: string;
  /** The site locale, from the server's site settings. */
  locale: string;
  today: string;
  /** the site's currency and tax (Admin › Site): every charge uses them */
  site: { currency: string; taxRatePercent: number; pricesIncludeTax: boolean };
}

export default function PricingAdmin({ machines, versions: initialVersions, currentId, timeZone, locale, today, site }: Props) {
  const f = siteFormat(locale, timeZone);
  const formatMoney = (minor: number, currency: string) => f.money(minor, currency);
  const [versions, setVersions] = useState(initialVersions);
  const base = versions.find((v) => v.id === currentId) ?? versions[0];
  const cur = site.currency;
  const m = (n: number | null | undefined) => (n === null || n === undefined ? '' : formatMinor(n, cur));
  const [effectiveDate, setEffectiveDate] = useState(today);
  const [increment, setIncrement] = useState(String(base?.incrementMinutes ?? 5));
  const [minimum, setMinimum] = useState(m(base?.minimumChargeMinor ?? 0));
  const [cap, setCap] = useState(m(base?.dailyCapMinor));
  const [lateFee, setLateFee] = useState(m(base?.lateCancelFeeMinor ?? 0));
  const [noShowFee, setNoShowFee] = useState(m(base?.noShowFeeMinor ?? 0));
  const [minimumRule, setMinimumRule] = useState<'carry' | 'waive'>(base?.minimumRule ?? 'carry');
  const [rechargeTiers, setRechargeTiers] = useState<Tier[]>(base?.rechargeTiers ?? []);
  const [note, setNote] = useState('');
  const [rates, setRates] = useState<Record<string, string>>(() => {
    const r: Record<string, string> = {};
    for (const mc of machines) for (const t of TIERS) r[`${mc.id}:${t}`] = m(base?.rates[mc.id]?.[t]);
    return r;
  });
  const [materials, setMaterials] = useState<{ sku: string; name: string; price: string }[]>(
    (base?.materials ?? []).map((x) => ({ sku: x.sku, name: x.name, price: m(x.priceMinor) })),
  );
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [fields, setFields] = useState<Record<string, string>>({});
  const [busy, setBusy] = useState(false);

  async function submit(e: FormEvent) {
    e.preventDefault();
    setMessage(null);
    const bad: Record<string, string> = {};
    const money = (label: string, text: string) => {
      const v = parseMajor(text, cur);
      if (v === null) bad[label] = `Enter an amount in ${cur}, e.g. ${formatMinor(150, cur)}.`;
      return v ?? 0;
    };
    const rateList: { machineId: string; tier: Tier; perMinuteMinor: number }[] = [];
    for (const mc of machines) {
      for (const t of TIERS) {
        const text = rates[`${mc.id}:${t}`] ?? '';
        if (text.trim() === '') continue;
        rateList.push({ machineId: mc.id, tier: t, perMinuteMinor: money(`rate ${mc.name} ${t}`, text) });
      }
    }
    const payload = {
      effectiveDate,
      incrementMinutes: Number(increment),
      minimumChargeMinor: money('minimum', minimum),
      dailyCapMinor: cap.trim() === '' ? null : money('cap', cap),
      lateCancelFeeMinor: money('late fee', lateFee),
      noShowFeeMinor: money('no-show fee', noShowFee),
      minimumRule,
      rechargeTiers,
      materials: materials.filter((x) => x.sku.trim()).map((x) => ({ sku: x.sku.trim(), name: x.name.trim(), priceMinor: money(`material ${x.sku}`, x.price) })),
      note,
      rates: rateList,
    };
    if (Object.keys(bad).length) {
      setFields(bad);
      setMessage({ tone: 'stop', text: `Check: ${Object.keys(bad).join(', ')}.` });
      return;
    }
    setBusy(true);
    try {
      const v = await api<VersionView>('/api/pricing/versions', { method: 'POST', json: payload });
      setVersions((list) => [v, ...list].sort((a, b) => b.effectiveFrom.localeCompare(a.effectiveFrom)));
      setFields({});
      setMessage({ tone: 'ok', text: `Saved: the new prices apply from ${fmt.format(new Date(v.effectiveFrom))}. Sessions that start before then keep the old prices.` });
    } catch (err) {
      if (err instanceof ApiError) {
        setFields(err.fields ?? {});
        setMessage({ tone: 'stop', text: err.message });
      } else setMessage({ tone: 'stop', text: 'The version was not saved.' });
    } finally {
      setBusy(false);
    }
  }

  const fmt = { format: (d: Date) => f.dateTime(d) };
  const now = Date.now();
  const inForce = versions.filter((v) => Date.parse(v.effectiveFrom) <= now).sort((a, b) => b.effectiveFrom.localeCompare(a.effectiveFrom))[0];

  // machines in use with no rate at all in the version in force: their beam time is not charged
  const unpriced = machines.filter((mc) => !inForce || TIERS.every((t) => inForce.rates[mc.id]?.[t] === undefined));

  return (
    <div className="space-y-8">
      {unpriced.length > 0 && (
        <p className="notice notice-warn" data-testid="unpriced">
          {unpriced.map((mc) => mc.name).join(', ')} {unpriced.length === 1 ? 'has' : 'have'} no rates in the prices in force, so {unpriced.length === 1 ? 'its' : 'their'} beam time is not charged. Enter rates below and save a new version from today.
        </p>
      )}
      <form onSubmit={submit} className="card space-y-5 p-4" aria-labelledby="new-version">
        <h2 id="new-version" className="text-lg font-semibold">New price version</h2>
        <p className="hint">Prices are never edited in place. Sessions are priced by the version in force when they started.</p>
        <div className="grid gap-3 sm:grid-cols-3">
          <label className="field">
            <span>Effective from (00:00, {timeZone})</span>
            <input className="input" type="date" min={today} value={effectiveDate} onChange={(e) => setEffectiveDate(e.target.value)} required aria-describedby="eff-hint" />
            <span id="eff-hint" className="hint">Today means from now.</span>
            {fields.effectiveFrom && <span className="text-sm text-[var(--color-stop)]">{fields.effectiveFrom}</span>}
          </label>
          <label className="field">
            <span>Rounding increment (minutes)</span>
            <input className="input" type="number" min={1} max={240} value={increment} onChange={(e) => setIncrement(e.target.value)} required />
          </label>
          <label className="field">
            <span>Minimum charge ({cur})</span>
            <input className="input" inputMode="decimal" value={minimum} onChange={(e) => setMinimum(e.target.value)} required />
          </label>
          <label className="field">
            <span>Daily cap per person ({cur}, empty: none)</span>
            <input className="input" inputMode="decimal" value={cap} onChange={(e) => setCap(e.target.value)} />
          </label>
          <label className="field">
            <span>Late-cancellation fee ({cur})</span>
            <input className="input" inputMode="decimal" value={lateFee} onChange={(e) => setLateFee(e.target.value)} required />
          </label>
          <label className="field">
            <span>No-show fee ({cur})</span>
            <input className="input" inputMode="decimal" value={noShowFee} onChange={(e) => setNoShowFee(e.target.value)} required />
          </label>
          <div className="field">
            <span>Currency and tax</span>
            <p className="py-2">{cur}; {site.taxRatePercent} % tax {site.pricesIncludeTax ? 'included in' : 'added to'} these prices.</p>
            <small className="hint">Set on <a href="/admin/site">Site</a>; a charge uses the tax in force when it is made, and its receipt shows it.</small>
          </div>
          <label className="field">
            <span>Sums below the card minimum</span>
            <select className="input" value={minimumRule} onChange={(e) => setMinimumRule(e.target.value as 'carry' | 'waive')}>
              <option value="carry">Carry to the balance owed</option>
              <option value="waive">Waive</option>
            </select>
          </label>
        </div>
        <fieldset className="flex flex-wrap gap-x-5 gap-y-1">
          <legend className="font-medium">Tiers billed to a cost centre (recharge) instead of a card</legend>
          {TIERS.map((t) => (
            <label key={t} className="inline-flex min-h-8 items-center gap-1.5">
              <input type="checkbox" className="h-4 w-4 accent-[var(--color-ember)]" checked={rechargeTiers.includes(t)}
                onChange={(e) => setRechargeTiers(e.target.checked ? [...rechargeTiers, t] : rechargeTiers.filter((x) => x !== t))} />
              {TIER_LABELS[t]}
            </label>
          ))}
        </fieldset>
        <div className="overflow-x-auto">
          <table className="table">
            <caption className="text-left font-medium">Rate per minute ({cur}); leave empty where a tier may not use the machine</caption>
            <thead><tr><th>Machine</th>{TIERS.map((t) => <th key={t}>{TIER_LABELS[t]}</th>)}</tr></thead>
            <tbody>
              {machines.map((mc) => (
                <tr key={mc.id}>
                  <td className="font-medium">{mc.name}</td>
                  {TIERS.map((t) => (
                    <td key={t}>
                      <input className="input w-20" inputMode="decimal" aria-label={`${mc.name}, ${TIER_LABELS[t]} rate per minute`} value={rates[`${mc.id}:${t}`] ?? ''}
                        onChange={(e) => setRates({ ...rates, [`${mc.id}:${t}`]: e.target.value })} />
                    </td>
                  ))}
                </tr>
              ))}
            </tbody>
          </table>
        </div>
        <div className="space-y-2">
          <p className="font-medium">Sheets sold by the space</p>
          {materials.map((x, i) => (
            <div key={i} className="flex flex-wrap items-end gap-2">
              <label className="field w-28"><span className="hint">Code</span><input className="input" value={x.sku} onChange={(e) => setMaterials(materials.map((y, j) => (j === i ? { ...y, sku: e.target.value } : y)))} /></label>
              <label className="field min-w-48 flex-1"><span className="hint">Name</span><input className="input" value={x.name} onChange={(e) => setMaterials(materials.map((y, j) => (j === i ? { ...y, name: e.target.value } : y)))} /></label>
              <label className="field w-28"><span className="hint">Price ({cur})</span><input className="input" inputMode="decimal" value={x.price} onChange={(e) => setMaterials(materials.map((y, j) => (j === i ? { ...y, price: e.target.value } : y)))} /></label>
              <button type="button" className="btn btn-quiet" onClick={() => setMaterials(materials.filter((_, j) => j !== i))}>Remove</button>
            </div>
          ))}
          <button type="button" className="btn btn-quiet" onClick={() => setMaterials([...materials, { sku: '', name: '', price: '' }])}>Add a sheet</button>
        </div>
        <label className="field">
          <span>Note for the history (why the change)</span>
          <input className="input" value={note} maxLength={500} onChange={(e) => setNote(e.target.value)} />
        </label>
        <button type="submit" className="btn btn-primary" disabled={busy}>{busy ? 'Saving…' : 'Save as new version'}</button>
        <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      </form>

      <section aria-labelledby="history" className="space-y-3">
        <h2 id="history" className="text-lg font-semibold">History</h2>
        <ol className="space-y-3">
          {versions.map((v) => {
            const future = Date.parse(v.effectiveFrom) > now;
            const state = v.id === inForce?.id ? 'In force' : future ? 'Scheduled' : 'Past';
            return (
              <li key={v.id} className="card p-4" data-version={v.id}>
                <div className="flex flex-wrap items-center justify-between gap-2">
                  <p className="font-semibold">From {fmt.format(new Date(v.effectiveFrom))}</p>
                  <span className={`status ${state === 'In force' ? 'status-ok' : state === 'Scheduled' ? 'status-warn' : ''}`}>
                    {state === 'In force' ? '✓' : state === 'Scheduled' ? '→' : '•'} {state}
                  </span>
                </div>
                <p className="hint">{v.note || 'No note'} · by {v.createdByName ?? 'the seed'} · {v.currency}, per started {v.incrementMinutes} min, minimum {formatMoney(v.minimumChargeMinor, v.currency)}
                  {v.dailyCapMinor !== null ? `, daily cap ${formatMoney(v.dailyCapMinor, v.currency)}` : ''}</p>
                <details className="mt-2">
                  <summary className="cursor-pointer text-sm">Rates</summary>
                  <ul className="mt-1 text-sm">
                    {machines.map((mc) => (
                      <li key={mc.id}>{mc.name}: {TIERS.map((t) => `${TIER_LABELS[t]} ${v.rates[mc.id]?.[t] !== undefined ? formatMoney(v.rates[mc.id]![t]!, v.currency) : '—'}`).join(' · ')} /min</li>
                    ))}
                  </ul>
                </details>
              </li>
            );
          })}
        </ol>
      </section>
    </div>
  );
}
