/** Admin › Machines: booking rules per machine — opening hours, grid, lengths, cool-down, lead, horizon, quotas, cut-off, closures. */
import { useCallback, useEffect, useId, useState } from 'react';
import { TIERS, TIER_LABELS, type Tier } from '@lib/vocabulary';
import { formatClock, localToInstant, parseClock, wallClock, type ClosureRow, type MachineRules } from '@lib/availability';
import type { Json } from '@lib/json';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

interface MachineInfo {
  id: string;
  name: string;
  status: string;
}
type Rules = Omit<MachineRules, 'machineId'>;
type Closure = Json<ClosureRow>;

const WEEKDAYS = ['Monday', 'Tuesday', 'Wednesday', 'Thursday', 'Friday', 'Saturday', 'Sunday'];

export default function MachineRulesAdmin({ machines, timeZone, locale, initialId }: { machines: MachineInfo[]; timeZone: string; locale: string; initialId?: string }) {
  const [machineId, setMachineId] = useState(initialId ?? machines[0]?.id ?? '');
  const [rules, setRules] = useState<Rules | null>(null);
  const [hoursText, setHoursText] = useState<{ weekday: number; opens: string; closes: string }[]>([]);
  const [quotaText, setQuotaText] = useState<Record<Tier, string>>({ student: '', staff: '', community: '', commercial: '' });
  const [closures, setClosures] = useState<Closure[]>([]);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string; fields?: Record<string, string> } | null>(null);
  const [busy, setBusy] = useState(false);
  const ids = useId();

  const load = useCallback(async () => {
    if (!machineId) return;
    const r = await api<Rules>(`/api/machines/${machineId}/rules`);
    setRules(r);
    setHoursText(r.hours.map((h) => ({ weekday: h.weekday, opens: formatClock(h.opensMinute), closes: formatClock(h.closesMinute) })));
    setQuotaText(Object.fromEntries(TIERS.map((t) => [t, r.quotas[t] === null ? '' : String(r.quotas[t]! / 60)])) as Record<Tier, string>);
    const from = new Date();
    const to = new Date(from.getTime() + 365 * 86_400_000);
    setClosures(await api<Closure[]>(`/api/machines/${machineId}/closures?from=${from.toISOString()}&to=${to.toISOString()}`));
  }, [machineId]);

  useEffect(() => {
    setMessage(null);
    load().catch((e) => setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load the rules.' }));
  }, [load]);

  async function save(e: React.FormEvent) {
    e.preventDefault();
    if (!rules) return;
    const hours = [];
    for (const h of hoursText) {
      const o = parseClock(h.opens);
      const c = parseClock(h.closes);
      if (o === null || c === null) return setMessage({ tone: 'stop', text: `Opening hours on ${WEEKDAYS[h.weekday - 1]}: use HH:MM (24-hour), e.g. 09:00 and 21:00.` });
      hours.push({ weekday: h.weekday, opensMinute: o, closesMinute: c });
    }
    const quotas = {} as Record<Tier, number | null>;
    for (const t of TIERS) {
      const v = quotaText[t].trim();
      if (v === '') quotas[t] = null;
      else {
        const n = Number(v);
        if (!Number.isFinite(n) || n < 0) return setMessage({ tone: 'stop', text: `Weekly limit for ${TIER_LABELS[t]}: a number of hours, or empty for no limit.` });
        quotas[t] = Math.round(n * 60);
      }
    }
    setBusy(true);
    try {
      const saved = await api<Rules>(`/api/machines/${machineId}/rules`, { method: 'PUT', json: { ...rules, quotas, hours } });
      setRules(saved);
      setMessage({ tone: 'ok', text: 'Saved. New bookings follow these rules; existing bookings stay as they are.' });
    } catch (err) {
      setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'Not saved.', ...(err instanceof ApiError && err.fields ? { fields: err.fields } : {}) });
    } finally {
      setBusy(false);
    }
  }

  const num = (key: keyof Omit<Rules, 'quotas' | 'hours'>, label: string, hint: string, opts: { min?: number; max?: number; step?: number } = {}) => (
    <label className="field">
      <span>{label}</span>
      <input
        className="input"
        type="number"
        inputMode="numeric"
        min={opts.min ?? 0}
        max={opts.max}
        step={opts.step ?? 1}
        value={rules ? rules[key] : ''}
        onChange={(e) => rules && setRules({ ...rules, [key]: Number(e.target.value) })}
        aria-describedby={`${ids}-${key}`}
      />
      <small id={`${ids}-${key}`} className="hint">{hint}{message?.fields?.[key] ? ` — ${message.fields[key]}` : ''}</small>
    </label>
  );

  return (
    <div className="space-y-5">
      <label className="field max-w-xs">
        <span>Machine</span>
        <select className="input" value={machineId} onChange={(e) => setMachineId(e.target.value)}>
          {machines.map((m) => <option key={m.id} value={m.id}>{m.name}</option>)}
        </select>
      </label>
      <div role="status" aria-live="polite">{message && <p className={`notice notice-${message.tone}`}>{message.text}</p>}</div>
      {rules && (
        <form className="card space-y-5 p-4" onSubmit={save}>
          <h3 className="text-lg">Booking rules of {machines.find((m) => m.id === machineId)?.name}</h3>
          <div className="grid gap-4 sm:grid-cols-2 lg:grid-cols-4">
            <label className="field">
              <span>Slot grid (minutes)</span>
              <select className="input" value={rules.slotMinutes} onChange={(e) => setRules({ ...rules, slotMinutes: Number(e.target.value) })}>
                {[5, 10, 15, 20, 30, 60].map((v) => <option key={v} value={v}>{v}</option>)}
              </select>
              <small className="hint">Bookings start and end on this grid.</small>
            </label>
            {num('minMinutes', 'Shortest booking (min)', 'A multiple of the grid.', { min: 5 })}
            {num('maxMinutes', 'Longest booking (min)', 'Class blocks may be longer.', { min: 5 })}
            {num('bufferMinutes', 'Cool-down after each booking (min)', 'Nobody may book this time.', { max: 240 })}
            {num('leadMinutes', 'Lead time (min)', 'How long ahead a booking must start.', { max: 10080 })}
            {num('horizonDays', 'Horizon (days)', 'How far ahead people can book.', { min: 1, max: 365 })}
            {num('cancelCutoffMinutes', 'Cancellation cut-off (min)', 'Later cancellations are marked late.', { max: 10080 })}
          </div>

          <fieldset className="space-y-2">
            <legend className="font-semibold">Weekly limit per person, by tier (hours; empty = no limit)</legend>
            <div className="grid gap-3 sm:grid-cols-4">
              {TIERS.map((t) => (
                <label key={t} className="field">
                  <span>{TIER_LABELS[t]}</span>
                  <input className="input" inputMode="decimal" value={quotaText[t]} onChange={(e) => setQuotaText({ ...quotaText, [t]: e.target.value })} />
                </label>
              ))}
            </div>
          </fieldset>

          <fieldset className="min-w-0 space-y-2">
            <legend className="font-semibold">Opening hours ({timeZone}, 24-hour clock)</legend>
            <div className="relative overflow-x-auto">
            <table className="table">
              <thead><tr><th>Day</th><th>Opens</th><th>Closes</th><th><span className="sr-only">Remove</span></th></tr></thead>
              <tbody>
                {hoursText.map((h, i) => (
                  <tr key={i}>
                    <td>
                      <select className="input" aria-label="Day" value={h.weekday} onChange={(e) => setHoursText(hoursText.map((x, j) => (j === i ? { ...x, weekday: Number(e.target.value) } : x)))}>
                        {WEEKDAYS.map((d, k) => <option key={d} value={k + 1}>{d}</option>)}
                      </select>
                    </td>
                    <td><input className="input w-[4.5rem] sm:w-24" aria-label={`Opens on ${WEEKDAYS[h.weekday - 1]}`} value={h.opens} onChange={(e) => setHoursText(hoursText.map((x, j) => (j === i ? { ...x, opens: e.target.value } : x)))} /></td>
                    <td><input className="input w-[4.5rem] sm:w-24" aria-label={`Closes on ${WEEKDAYS[h.weekday - 1]}`} value={h.closes} onChange={(e) => setHoursText(hoursText.map((x, j) => (j === i ? { ...x, closes: e.target.value } : x)))} /></td>
                    <td><button type="button" className="btn btn-quiet relative" onClick={() => setHoursText(hoursText.filter((_, j) => j !== i))}><span aria-hidden="true" className="sm:hidden">✕</span><span className="sr-only sm:not-sr-only">Remove</span><span className="sr-only"> {WEEKDAYS[h.weekday - 1]} {h.opens}–{h.closes}</span></button></td>
                  </tr>
                ))}
              </tbody>
            </table>
            </div>
            <button type="button" className="btn btn-quiet" onClick={() => setHoursText([...hoursText, { weekday: 1, opens: '09:00', closes: '17:00' }])}>Add opening hours</button>
          </fieldset>
          <button type="submit" className="btn btn-primary" disabled={busy}>{busy ? 'Saving…' : 'Save rules'}</button>
        </form>
      )}
      <Closures machineId={machineId} timeZone={timeZone} locale={locale} closures={closures} reload={load} onMessage={setMessage} />
    </div>
  );
}

function Closures(p: { machineId: string; timeZone: string; locale: string; closures: Closure[]; reload: () => Promise<void>; onMessage: (m: { tone: 'ok' | 'stop'; text: string }) => void }) {
  const today = wallClock(new Date(), p.timeZone);
  const [date, setDate] = useState(`${today.year}-${String(today.month).padStart(2, '0')}-${String(today.day).padStart(2, '0')}`);
  const [endDate, setEndDate] = useState(date);
  const [from, setFrom] = useState('09:00');
  const [until, setUntil] = useState('17:00');
  const [reason, setReason] = useState('');
  const f = siteFormat(p.locale, p.timeZone);
  const fmt = { format: (d: Date) => f.dayTime(d) };

  async function add(e: React.FormEvent) {
    e.preventDefault();
    const d1 = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
    const d2 = /^(\d{4})-(\d{2})-(\d{2})$/.exec(endDate);
    const f = parseClock(from);
    const u = parseClock(until);
    if (!d1 || !d2 || f === null || u === null) return p.onMessage({ tone: 'stop', text: 'Closure: choose dates and HH:MM times.' });
    const startsAt = localToInstant(Number(d1[1]), Number(d1[2]), Number(d1[3]), f, p.timeZone);
    const endsAt = localToInstant(Number(d2[1]), Number(d2[2]), Number(d2[3]), u, p.timeZone);
    try {
      await api(`/api/machines/${p.machineId}/closures`, { method: 'POST', json: { startsAt: startsAt.toISOString(), endsAt: endsAt.toISOString(), reason } });
      setReason('');
      p.onMessage({ tone: 'ok', text: 'Closure added. Bookings already in that time stay; tell the people booked.' });
      await p.reload();
    } catch (err) {
      p.onMessage({ tone: 'stop', text: err instanceof ApiError ? `${err.message}${err.fields ? ' ' + Object.values(err.fields).join(' ') : ''}` : 'Not added.' });
    }
  }

  async function remove(id: string) {
    await api(`/api/closures/${id}`, { method: 'DELETE' });
    await p.reload();
  }

  return (
    <section className="card space-y-3 p-4" aria-label="Closures">
      <h3 className="text-lg">Closures</h3>
      {p.closures.length === 0 ? (
        <p className="hint">No closures ahead.</p>
      ) : (
        <ul className="space-y-2">
          {p.closures.map((c) => (
            <li key={c.id} className="flex flex-wrap items-center justify-between gap-2 border-b border-line pb-2">
              <span>{fmt.format(new Date(c.startsAt))} – {fmt.format(new Date(c.endsAt))}: <strong>{c.reason}</strong>{c.machineId === null ? ' (whole site)' : ''}</span>
              <button type="button" className="btn btn-quiet" onClick={() => remove(c.id)}>Remove</button>
            </li>
          ))}
        </ul>
      )}
      <form className="grid gap-3 sm:grid-cols-6" onSubmit={add}>
        <label className="field"><span>From date</span><input className="input" type="date" value={date} onChange={(e) => { setDate(e.target.value); if (endDate < e.target.value) setEndDate(e.target.value); }} /></label>
        <label className="field"><span>Time</span><input className="input" value={from} onChange={(e) => setFrom(e.target.value)} /></label>
        <label className="field"><span>Until date</span><input className="input" type="date" value={endDate} onChange={(e) => setEndDate(e.target.value)} /></label>
        <label className="field"><span>Time</span><input className="input" value={until} onChange={(e) => setUntil(e.target.value)} /></label>
        <label className="field sm:col-span-2"><span>Reason (shown to people)</span><input className="input" value={reason} maxLength={200} onChange={(e) => setReason(e.target.value)} /></label>
        <div className="sm:col-span-6"><button type="submit" className="btn btn-primary">Add closure</button></div>
      </form>
    </section>
  );
}
