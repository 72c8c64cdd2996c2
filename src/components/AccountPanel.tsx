/** Account: tier, balance owed, the saved card (test mode offers the provider's test tokens), and the charges table. */
import { Pager } from './ui/Pager';
import { useCallback, useEffect, useState, type FormEvent } from 'react';
import { TIER_LABELS, formatMoney, type Tier } from '../lib/pricing';
import { api, ApiError } from './ui/api';

interface Summary {
  tier: Tier;
  costCentre: string | null;
  recharge: boolean;
  card: { brand: string; last4: string } | null;
  currency: string;
  balanceOwedMinor: number;
  failed: number;
}
interface ChargeRow {
  id: string;
  createdAt: string;
  machineName: string | null;
  kind: string;
  method: 'card' | 'recharge';
  state: string;
  currency: string;
  amountMinor: number;
  refundedMinor: number;
  minutes: number | null;
}
interface PageData {
  total: number;
  rows: ChargeRow[];
}
type Sort = 'date' | 'amount' | 'state' | 'machine';

const TEST_TOKENS = [
  { token: 'tok_visa', label: 'Visa test card ending 4242 — payments go through' },
  { token: 'tok_chargeCustomerFail', label: 'Visa test card ending 0341 — saves, then every payment is declined' },
  { token: 'tok_chargeDeclined', label: 'Test card declined when saved' },
];

const STATE_TONE: Record<string, string> = {
  captured: 'status-ok', recharged: 'status-ok', settled: 'status-ok', held: 'status-warn', queued: 'status-warn', pending: 'status-warn',
  carried: 'status-warn', 'payment failed': 'status-stop', refunded: '', released: '', waived: '', 'refund pending': 'status-warn',
};
const STATE_ICON: Record<string, string> = { captured: '✓', recharged: '✓', settled: '✓', 'payment failed': '✕', held: '⏸', queued: '↻', carried: '→', 'refund pending': '↻' };

export default function AccountPanel({ initial, timeZone, testMode }: { initial: Summary; timeZone: string; testMode: boolean }) {
  const [summary, setSummary] = useState(initial);
  const [token, setToken] = useState('tok_visa');
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [sort, setSort] = useState<Sort>('date');
  const [dir, setDir] = useState<'asc' | 'desc'>('desc');
  const [page, setPage] = useState(1);
  const [data, setData] = useState<PageData | null>(null);
  const pageSize = 10;

  const load = useCallback(async () => {
    const params = new URLSearchParams({ page: String(page), pageSize: String(pageSize), sort, dir });
    try {
      setData(await api<PageData>(`/api/account/charges?${params}`));
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load your charges.' });
    }
  }, [page, sort, dir]);
  useEffect(() => {
    void load();
  }, [load]);

  async function saveCard(e: FormEvent) {
    e.preventDefault();
    setBusy(true);
    setMessage(null);
    try {
      const r = await api<{ card: { brand: string; last4: string }; settled: number }>('/api/account/card', { method: 'POST', json: { token } });
      setSummary(await api<Summary>('/api/account'));
      setMessage({ tone: 'ok', text: `Card saved: ${r.card.brand} ending ${r.card.last4}.${r.settled ? ` ${r.settled} failed payment(s) settled.` : ''}` });
      void load();
    } catch (err) {
      setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'The card was not saved.' });
    } finally {
      setBusy(false);
    }
  }

  function sortBy(c: Sort) {
    if (sort === c) setDir(dir === 'asc' ? 'desc' : 'asc');
    else {
      setSort(c);
      setDir(c === 'date' || c === 'amount' ? 'desc' : 'asc');
    }
    setPage(1);
  }
  const mark = (c: Sort) => (sort === c ? (dir === 'asc' ? ' ▲' : ' ▼') : '');
  const aria = (c: Sort) => (sort === c ? (dir === 'asc' ? 'ascending' : 'descending') : 'none');
  const pages = data ? Math.max(1, Math.ceil(data.total / pageSize)) : 1;
  const when = new Intl.DateTimeFormat('en-NZ', { timeZone, dateStyle: 'medium', timeStyle: 'short' });

  return (
    <div className="space-y-6">
      <section className="grid gap-4 sm:grid-cols-3" aria-label="Summary">
        <div className="card p-4">
          <p className="hint">Tier</p>
          <p className="text-xl font-semibold" data-testid="tier">{TIER_LABELS[summary.tier]}</p>
          {summary.costCentre && <p className="hint">Cost centre {summary.costCentre}{summary.recharge ? ' — your beam time is recharged there' : ''}</p>}
        </div>
        <div className="card p-4">
          <p className="hint">Balance owed</p>
          <p className={`text-xl font-semibold ${summary.balanceOwedMinor > 0 ? 'text-[var(--color-stop)]' : ''}`} data-testid="balance">
            {formatMoney(summary.balanceOwedMinor, summary.currency)}
          </p>
          {summary.failed > 0 && <p className="hint">✕ A payment failed: bookings are paused until a working card settles it.</p>}
        </div>
        <div className="card p-4">
          <p className="hint">Saved card</p>
          <p className="text-xl font-semibold" data-testid="card">{summary.card ? `${summary.card.brand} •••• ${summary.card.last4}` : 'None'}</p>
          {summary.recharge && <p className="hint">Not needed while your tier is recharged.</p>}
        </div>
      </section>

      <section className="card p-4 space-y-3" aria-labelledby="card-heading">
        <h2 id="card-heading" className="text-lg font-semibold">{summary.card ? 'Replace your card' : 'Save a card'}</h2>
        {testMode && (
          <p className="notice notice-warn" role="note">
            <strong>TEST MODE.</strong> No real card is charged: pick one of the payment provider's documented test cards.
          </p>
        )}
        <form onSubmit={saveCard} className="space-y-3">
          <fieldset className="space-y-2">
            <legend className="font-medium">Test card</legend>
            {TEST_TOKENS.map((t) => (
              <label key={t.token} className="flex min-h-8 items-start gap-2">
                <input type="radio" name="token" value={t.token} checked={token === t.token} onChange={() => setToken(t.token)} className="mt-1 h-4 w-4 accent-[var(--color-ember)]" />
                <span>{t.label} <code className="text-xs text-charcoal-soft">{t.token}</code></span>
              </label>
            ))}
          </fieldset>
          <button type="submit" className="btn btn-primary" disabled={busy}>{busy ? 'Saving…' : 'Save test card'}</button>
        </form>
        <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      </section>

      <section className="space-y-3" aria-labelledby="charges-heading">
        <h2 id="charges-heading" className="text-lg font-semibold">Beam time and charges</h2>
        <div className="card overflow-x-auto">
          <table className="table">
            <caption className="sr-only">Your charges</caption>
            <thead>
              <tr>
                <th aria-sort={aria('date')}><button type="button" className="font-semibold" onClick={() => sortBy('date')}>Date{mark('date')}</button></th>
                <th aria-sort={aria('machine')} className="hidden sm:table-cell"><button type="button" className="font-semibold" onClick={() => sortBy('machine')}>Machine{mark('machine')}</button></th>
                <th aria-sort={aria('amount')} className="text-right"><button type="button" className="font-semibold" onClick={() => sortBy('amount')}>Amount{mark('amount')}</button></th>
                <th aria-sort={aria('state')}><button type="button" className="font-semibold" onClick={() => sortBy('state')}>State{mark('state')}</button></th>
                <th><span className="sr-only">Receipt</span></th>
              </tr>
            </thead>
            <tbody>
              {data?.rows.map((c) => (
                <tr key={c.id}>
                  <td className="whitespace-nowrap text-sm">{when.format(new Date(c.createdAt))}
                    <span className="block text-charcoal-soft sm:hidden">{c.machineName ?? '—'}</span></td>
                  <td className="hidden sm:table-cell">{c.machineName ?? '—'}{c.minutes ? <span className="hint"> · {c.minutes} min</span> : null}
                    {c.kind !== 'beam_time' && <span className="hint"> · {c.kind.replace('_', ' ')}</span>}</td>
                  <td className="whitespace-nowrap text-right tabular-nums">{formatMoney(c.amountMinor, c.currency)}
                    {c.refundedMinor > 0 && <span className="block hint">refunded {formatMoney(c.refundedMinor, c.currency)}</span>}</td>
                  <td><span className={`status ${STATE_TONE[c.state] ?? ''}`}>{STATE_ICON[c.state] ?? '•'} {c.state}</span></td>
                  <td><a href={`/account/receipts/${c.id}`}>Receipt</a></td>
                </tr>
              ))}
              {data && data.rows.length === 0 && (
                <tr><td colSpan={5} className="text-center text-charcoal-soft">No charges yet. Beam time is charged when you check out.</td></tr>
              )}
            </tbody>
          </table>
        </div>
        <Pager total={data ? data.total : null} noun={['charge', 'charges']} page={page} pages={pages} onPage={setPage} />
      </section>
    </div>
  );
}
