/**
 * Account: tier, balance owed, the saved card, and the charges table. With practice payments (the provider's
 * test mode) the card choices are described by what they do; the provider's test-token names stay in code.
 */
import { siteFormat } from '@lib/format';
import { Pager } from './ui/Pager';
import { useCallback, useEffect, useState, type FormEvent } from 'react';
import { TIER_LABELS, type Tier } from '@lib/vocabulary';
import { api, ApiError } from './ui/api';
import type { AccountSummary, ChargeJson, ChargeSort } from '@lib/account-views';

type Summary = AccountSummary;
type ChargeRow = ChargeJson;
interface PageData {
  total: number;
  rows: ChargeRow[];
}
type Sort = ChargeSort;

/** Practice cards: what each does, and (in code only) the provider's token for it. */
const PRACTICE_CARDS = [
  { token: 'tok_visa', label: 'Always approved', detail: 'Every payment with this card goes through.' },
  { token: 'tok_chargeCustomerFail', label: 'Approved when saved, every payment refused', detail: 'Shows what happens when a payment fails: bookings pause until another card settles it.' },
  { token: 'tok_chargeDeclined', label: 'Refused when saved', detail: 'The card is not saved; nothing changes on your account.' },
];

const STATE_TONE: Record<string, string> = {
  captured: 'status-ok', recharged: 'status-ok', settled: 'status-ok', held: 'status-warn', queued: 'status-warn', pending: 'status-warn',
  carried: 'status-warn', 'payment failed': 'status-stop', refunded: '', released: '', waived: '', 'refund pending': 'status-warn',
};
const STATE_ICON: Record<string, string> = { captured: '✓', recharged: '✓', settled: '✓', 'payment failed': '✕', held: '⏸', queued: '↻', carried: '→', 'refund pending': '↻' };

export default function AccountPanel({ initial, timeZone, locale, testMode }: { initial: Summary; timeZone: string; locale: string; testMode: boolean }) {
  const f = siteFormat(locale, timeZone);
  const formatMoney = (minor: number, currency: string) => f.money(minor, currency);
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
  const when = { format: (d: Date) => f.dateTime(d) };

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
          <p className="notice notice-info" role="note">
            <strong>Practice payments — no real money moves.</strong> Choose a practice card by what you want to try; no real card is asked for or charged.
          </p>
        )}
        <form onSubmit={saveCard} className="space-y-3">
          <fieldset className="space-y-2">
            <legend className="font-medium">Practice card</legend>
            {PRACTICE_CARDS.map((t, i) => (
              <label key={t.token} className="flex min-h-8 items-start gap-2">
                <input type="radio" name="practice-card" value={String(i + 1)} checked={token === t.token} onChange={() => setToken(t.token)} className="mt-1 h-4 w-4 accent-[var(--color-ember)]" />
                <span><span className="font-medium">{t.label}</span> <span className="hint block">{t.detail}</span></span>
              </label>
            ))}
          </fieldset>
          <button type="submit" className="btn btn-primary" disabled={busy}>{busy ? 'Saving…' : 'Save practice card'}</button>
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
