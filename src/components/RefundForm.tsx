/** Steward/admin: refund a charge in full or in part, with a reason (audited on the server). */
import { useState, type FormEvent } from 'react';
import { formatMinor, parseMajor } from '@lib/format';
import { api, ApiError } from './ui/api';

export default function RefundForm({ chargeId, currency, leftMinor }: { chargeId: string; currency: string; leftMinor: number }) {
  const [amount, setAmount] = useState(formatMinor(leftMinor, currency));
  const [reason, setReason] = useState('');
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);

  async function submit(e: FormEvent) {
    e.preventDefault();
    const minor = parseMajor(amount, currency);
    if (minor === null || minor < 1) {
      setMessage({ tone: 'stop', text: `Enter an amount such as ${formatMinor(leftMinor, currency)}.` });
      return;
    }
    setBusy(true);
    try {
      await api(`/api/charges/${chargeId}/refund`, { method: 'POST', json: { amountMinor: minor, reason } });
      window.location.reload();
    } catch (err) {
      setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'The refund was not made.' });
      setBusy(false);
    }
  }

  return (
    <form onSubmit={submit} className="card space-y-3 p-4">
      <h2 className="text-lg font-semibold">Refund</h2>
      <div className="flex flex-wrap gap-3">
        <label className="field w-40">
          <span>Amount ({currency})</span>
          <input className="input" inputMode="decimal" value={amount} onChange={(e) => setAmount(e.target.value)} required />
        </label>
        <label className="field min-w-64 flex-1">
          <span>Reason (the member sees it)</span>
          <input className="input" value={reason} onChange={(e) => setReason(e.target.value)} minLength={3} maxLength={500} required />
        </label>
      </div>
      <button type="submit" className="btn btn-primary" disabled={busy}>Refund</button>
      <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
    </form>
  );
}
