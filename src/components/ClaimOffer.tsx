/** Claims a waitlist offer (the link in the e-mail) and turns the 15-minute hold into a booking. */
import { useState } from 'react';
import { api, ApiError } from './ui/api';

export default function ClaimOffer({ token }: { token: string }) {
  const [state, setState] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);
  async function claim() {
    setBusy(true);
    try {
      await api('/api/waitlist/claim', { method: 'POST', json: { token } });
      setState({ tone: 'ok', text: 'It is yours: the time is booked. A confirmation with a calendar file is on its way.' });
    } catch (e) {
      setState({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not claim the time; try again.' });
    } finally {
      setBusy(false);
    }
  }
  return (
    <div className="space-y-3">
      {state ? (
        <p className={`notice notice-${state.tone}`} role="status">{state.text}</p>
      ) : (
        <button type="button" className="btn btn-primary" onClick={claim} disabled={busy || !token}>{busy ? 'Claiming…' : 'Claim this time'}</button>
      )}
      <p><a href="/book">Back to the calendar</a></p>
    </div>
  );
}
