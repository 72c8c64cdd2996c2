/** Badges (stewards, admins): give the badge just read at a machine to the person standing there, enrol and remove badges. */
import { useEffect, useId, useState } from 'react';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

interface Unknown {
  id: string;
  lastFour: string;
  seenAt: string;
  machineName: string;
  controllerName: string;
}
interface Found {
  id: string;
  name: string;
  email: string;
  active: boolean;
  badges: number;
}
interface Badge {
  id: string;
  lastFour: string;
  createdAt: string;
  createdByName: string | null;
}

function PersonSearch({ onPick, label }: { onPick: (p: Found) => void; label: string }) {
  const id = useId();
  const [q, setQ] = useState('');
  const [found, setFound] = useState<Found[] | null>(null);
  const [error, setError] = useState<string | null>(null);
  async function search(e: React.FormEvent) {
    e.preventDefault();
    setError(null);
    try {
      setFound(await api<Found[]>(`/api/badges/people?q=${encodeURIComponent(q)}`));
    } catch (err) {
      setError(err instanceof ApiError ? err.message : 'Search failed; try again.');
    }
  }
  return (
    <div className="space-y-2">
      <form className="flex flex-wrap items-end gap-2" onSubmit={search}>
        <label htmlFor={id} className="flex flex-col gap-1 text-sm font-medium">
          {label}
          <input id={id} className="input" value={q} minLength={2} required placeholder="Name or e-mail" onChange={(e) => setQ(e.target.value)} />
        </label>
        <button className="btn btn-quiet">Search</button>
      </form>
      {error && <p className="text-sm text-stop" role="alert">{error}</p>}
      {found && (found.length === 0 ? <p className="hint">Nobody matches.</p> : (
        <ul className="space-y-1">
          {found.map((p) => (
            <li key={p.id}>
              <button type="button" className="btn btn-quiet w-full flex-wrap justify-start gap-x-2 text-left" onClick={() => { setFound(null); onPick(p); }}>
                {p.name} <span className="hint break-all font-normal">{p.email}{p.active ? '' : ' · not active'} · {p.badges} badge{p.badges === 1 ? '' : 's'}</span>
              </button>
            </li>
          ))}
        </ul>
      ))}
    </div>
  );
}

export default function BadgesDesk({ timeZone, locale }: { timeZone: string; locale: string }) {
  const f = siteFormat(locale, timeZone);
  const ids = useId();
  const [unknown, setUnknown] = useState<Unknown[] | null>(null);
  const [assigning, setAssigning] = useState<Unknown | null>(null);
  const [person, setPerson] = useState<Found | null>(null);
  const [badges, setBadges] = useState<Badge[]>([]);
  const [badge, setBadge] = useState('');
  const [message, setMessage] = useState<{ ok: boolean; text: string; where: 'unknown' | 'person' } | null>(null);
  const time = (iso: string) => f.time(new Date(iso));

  const loadUnknown = () => api<Unknown[]>('/api/badges/unknown').then(setUnknown);
  const loadBadges = (p: Found) => api<Badge[]>(`/api/people/${p.id}/badges`).then(setBadges);
  useEffect(() => {
    void loadUnknown().catch(() => setUnknown([]));
  }, []);

  async function run(where: 'unknown' | 'person', work: () => Promise<string>) {
    setMessage(null);
    try {
      setMessage({ ok: true, text: await work(), where });
    } catch (err) {
      setMessage({ ok: false, text: err instanceof ApiError ? err.message : 'Something went wrong; try again.', where });
    }
  }
  const answer = (where: 'unknown' | 'person') =>
    message?.where === where ? <p className={`notice ${message.ok ? 'notice-ok' : 'notice-stop'}`} role={message.ok ? 'status' : 'alert'}>{message.text}</p> : null;

  return (
    <div className="grid gap-8 lg:grid-cols-2">
      <section aria-labelledby={`${ids}-u`} className="card space-y-3 p-4">
        <h2 id={`${ids}-u`} className="text-xl">Just read at a machine</h2>
        <p className="hint">Badges a controller read in the last hour that nobody holds. Ask the person at the machine to badge again if theirs is not here.</p>
        <button type="button" className="btn btn-quiet" onClick={() => void loadUnknown()}>Refresh</button>
        {unknown === null ? <p className="hint">Loading…</p> : unknown.length === 0 ? <p className="hint">No unknown badges in the last hour.</p> : (
          <ul className="space-y-2">
            {unknown.map((u) => (
              <li key={u.id} className="flex flex-wrap items-center justify-between gap-2 border-b border-charcoal/10 pb-2">
                <span><span className="font-mono">…{u.lastFour}</span> <span className="hint">at {u.machineName} ({u.controllerName}), {time(u.seenAt)}</span></span>
                <button type="button" className="btn btn-quiet" onClick={() => setAssigning(u)}>Give to a person…</button>
              </li>
            ))}
          </ul>
        )}
        {assigning && (
          <div className="notice space-y-2">
            <p className="font-medium">Give badge …{assigning.lastFour} to:</p>
            <PersonSearch label="Person standing at the machine" onPick={(p) => void run('unknown', async () => {
              await api(`/api/badges/unknown/${assigning.id}/assign`, { method: 'POST', json: { personId: p.id } });
              setAssigning(null);
              await loadUnknown();
              return `Badge …${assigning.lastFour} now belongs to ${p.name}. Ask them to badge again.`;
            })} />
            <button type="button" className="btn btn-quiet" onClick={() => setAssigning(null)}>Cancel</button>
          </div>
        )}
        {answer('unknown')}
      </section>

      <section aria-labelledby={`${ids}-e`} className="card space-y-3 p-4">
        <h2 id={`${ids}-e`} className="text-xl">A person’s badges</h2>
        <PersonSearch label="Find the person" onPick={(p) => { setPerson(p); setMessage(null); void loadBadges(p); }} />
        {person && (
          <div className="space-y-3 border-t border-[var(--color-line)] pt-3" aria-label={`Badges of ${person.name}`} role="group">
            <h3 className="font-semibold">Badges of {person.name} <span className="hint block break-all font-normal">{person.email}</span></h3>
            {badges.length === 0 ? <p className="hint">No badges yet.</p> : (
              <ul className="space-y-1">
                {badges.map((b) => (
                  <li key={b.id} className="flex items-center justify-between gap-2">
                    <span><span className="font-mono">…{b.lastFour}</span> <span className="hint">enrolled {f.date(new Date(b.createdAt))}{b.createdByName ? ` by ${b.createdByName}` : ''}</span></span>
                    <button type="button" className="btn btn-quiet" onClick={() => {
                      if (!confirm(`Remove badge …${b.lastFour} from ${person.name}?`)) return;
                      void run('person', async () => { await api(`/api/badges/${b.id}`, { method: 'DELETE' }); await loadBadges(person); return `Badge …${b.lastFour} removed.`; });
                    }}>Remove</button>
                  </li>
                ))}
              </ul>
            )}
            <form className="flex flex-wrap items-end gap-2" onSubmit={(e) => {
              e.preventDefault();
              void run('person', async () => {
                const r = await api<Badge>(`/api/people/${person.id}/badges`, { method: 'POST', json: { badge } });
                setBadge('');
                await loadBadges(person);
                return `Badge …${r.lastFour} enrolled for ${person.name}.`;
              });
            }}>
              <label className="flex flex-col gap-1 text-sm font-medium">
                Badge UID (from a desk reader)
                <input className="input font-mono" value={badge} required minLength={4} maxLength={64} autoComplete="off" placeholder="04:A2:19:7F:33:80" onChange={(e) => setBadge(e.target.value)} />
              </label>
              <button className="btn btn-primary">Enrol badge</button>
            </form>
            <p className="hint text-sm">Only the last four characters are kept readable; the rest is stored as a fingerprint.</p>
          </div>
        )}
        {answer('person')}
      </section>
    </div>
  );
}
