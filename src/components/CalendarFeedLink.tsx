/** "Add to your calendar app": a private feed URL the person can create, replace or revoke. */
import { useEffect, useId, useState } from 'react';
import { api, ApiError } from './ui/api';

export default function CalendarFeedLink() {
  const [active, setActive] = useState<boolean | null>(null);
  const [url, setUrl] = useState<string | null>(null);
  const [message, setMessage] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const id = useId();

  useEffect(() => {
    api<{ active: boolean }>('/api/calendar-feed').then((r) => setActive(r.active)).catch(() => setActive(false));
  }, []);

  async function create() {
    setBusy(true);
    setMessage(null);
    try {
      const r = await api<{ url: string }>('/api/calendar-feed', { method: 'POST' });
      setUrl(r.url);
      setActive(true);
    } catch (e) {
      setMessage(e instanceof ApiError ? e.message : 'Could not create the address.');
    } finally {
      setBusy(false);
    }
  }

  async function revoke() {
    setBusy(true);
    try {
      await api('/api/calendar-feed', { method: 'DELETE' });
      setUrl(null);
      setActive(false);
      setMessage('Revoked: calendar apps using the old address stop receiving your bookings.');
    } finally {
      setBusy(false);
    }
  }

  return (
    <section className="card space-y-3 p-4" aria-labelledby={id}>
      <h2 id={id} className="text-lg">Your bookings in your calendar app</h2>
      <p className="hint">
        A private address (iCalendar feed) that phone and desktop calendar apps can subscribe to. Anyone with the address can see your
        bookings: keep it to yourself, and replace or revoke it if it leaks.
      </p>
      {url && (
        <label className="field">
          <span>Your private calendar address (shown once)</span>
          <input className="input font-mono text-sm" readOnly value={url} onFocus={(e) => e.currentTarget.select()} />
        </label>
      )}
      {!url && active && <p className="text-sm">You have an active address. Make a new one to see it again (the old one stops working).</p>}
      {message && <p className="notice notice-ok" role="status">{message}</p>}
      <div className="flex flex-wrap gap-2">
        <button type="button" className="btn btn-quiet" onClick={create} disabled={busy || active === null}>{active ? 'Make a new address' : 'Create my calendar address'}</button>
        {active && <button type="button" className="btn btn-quiet" onClick={revoke} disabled={busy}>Revoke</button>}
      </div>
    </section>
  );
}
