/**
 * On a Clearances card: the next induction sessions of the group with seats left, and the person's own seat.
 * Book a seat, join the waitlist of a full session, or give a seat up (asked first). The answer appears next
 * to the button that caused it, in a live region, with focus moved to it.
 */
import { useRef, useState } from 'react';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

export interface SeatSession {
  id: string;
  startsAt: string;
  endsAt: string;
  place: string;
  kind: 'first' | 'refresher';
  capacity: number;
  seatsLeft: number;
  bring: string;
  instructorName: string;
  waiting: boolean;
}

export interface MySeat {
  sessionId: string;
  startsAt: string;
  endsAt: string;
  place: string;
  kind: 'first' | 'refresher';
  bring: string;
}

interface Props {
  groupName: string;
  timeZone: string;
  /** The site locale, from the server's site settings. */
  locale: string;
  sessions: SeatSession[];
  seat: MySeat | null;
  /** Why this person cannot take a seat now (shown instead of the buttons); null when they can. */
  notEligible: string | null;
}

const KIND: Record<SeatSession['kind'], string> = { first: 'First induction', refresher: 'Refresher' };

export default function SessionSeats({ groupName, timeZone, locale, sessions, seat, notEligible }: Props) {
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState<string | null>(null);
  const [confirming, setConfirming] = useState(false);
  const live = useRef<HTMLParagraphElement>(null);
  const when = (s: { startsAt: string; endsAt: string }) => siteFormat(locale, timeZone).range(new Date(s.startsAt), new Date(s.endsAt));

  function say(tone: 'ok' | 'stop', text: string) {
    setMessage({ tone, text });
    requestAnimationFrame(() => live.current?.focus());
  }

  async function act(key: string, path: string, method: 'POST' | 'DELETE', done: string) {
    setBusy(key);
    try {
      await api(path, { method, json: method === 'POST' ? {} : undefined });
      say('ok', done);
      setTimeout(() => window.location.reload(), 1200);
    } catch (e) {
      say('stop', e instanceof ApiError ? e.message : 'That did not work; try again.');
      setBusy(null);
    }
  }

  return (
    <div className="space-y-3" data-sessions={groupName}>
      {seat ? (
        <div className="notice notice-ok space-y-2" data-my-seat>
          <p><strong>Booked for {when(seat)}</strong> — {KIND[seat.kind].toLowerCase()} at {seat.place}.</p>
          {seat.bring && <p className="text-sm">Bring: {seat.bring}</p>}
          {confirming ? (
            <div className="flex flex-wrap items-center gap-2">
              <span className="text-sm">Give up this seat? It goes to the next person waiting.</span>
              <button type="button" className="btn btn-primary" disabled={busy !== null} onClick={() => act('cancel', `/api/induction-sessions/${seat.sessionId}/seats/mine`, 'DELETE', 'Your seat is cancelled; an e-mail confirms it.')}>
                {busy === 'cancel' ? 'Cancelling…' : 'Yes, cancel my seat'}
              </button>
              <button type="button" className="btn btn-quiet" onClick={() => setConfirming(false)}>Keep it</button>
            </div>
          ) : (
            <button type="button" className="btn btn-quiet" onClick={() => setConfirming(true)}>Cancel my seat…</button>
          )}
        </div>
      ) : sessions.length === 0 ? (
        <p className="text-sm">No {groupName.toLowerCase()} sessions are published yet. Instructors add them every few weeks; this card lists them as soon as they are.</p>
      ) : (
        <>
          {notEligible && <p className="text-sm" data-not-eligible>{notEligible}</p>}
          <ul className="space-y-2" aria-label={`Next ${groupName} sessions`}>
            {sessions.map((s) => (
              <li key={s.id} className="rounded border border-line p-3" data-session={s.id}>
                <div className="flex flex-wrap items-center justify-between gap-2">
                  <div>
                    <p className="font-semibold">{when(s)}</p>
                    <p className="hint">{KIND[s.kind]} · {s.place} · with {s.instructorName}</p>
                    <p className="hint">{s.seatsLeft > 0 ? `${s.seatsLeft} of ${s.capacity} seats left` : 'Full'}{s.bring ? ` · bring: ${s.bring}` : ''}</p>
                  </div>
                  {!notEligible && (s.seatsLeft > 0 ? (
                    <button type="button" className="btn btn-primary" disabled={busy !== null} onClick={() => act(s.id, `/api/induction-sessions/${s.id}/seats`, 'POST', `Seat booked for ${when(s)}. A confirmation e-mail with a calendar file is on its way.`)}>
                      {busy === s.id ? 'Booking…' : 'Book a seat'}
                    </button>
                  ) : s.waiting ? (
                    <span className="hint">On the waitlist</span>
                  ) : (
                    <button type="button" className="btn btn-quiet" disabled={busy !== null} onClick={() => act(s.id, `/api/induction-sessions/${s.id}/waitlist`, 'POST', 'You are on the waitlist: if a seat frees up it is given to you and you get an e-mail.')}>
                      {busy === s.id ? 'Joining…' : 'Join the waitlist'}
                    </button>
                  ))}
                </div>
              </li>
            ))}
          </ul>
        </>
      )}
      <p ref={live} tabIndex={-1} aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only-focusable'} role={message?.tone === 'stop' ? 'alert' : 'status'}>
        {message?.text ?? ''}
      </p>
    </div>
  );
}
