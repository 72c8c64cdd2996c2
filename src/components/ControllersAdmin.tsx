/** Admin › Machines › Controllers: register the box at a machine (its token shown once), new token, revoke; walk-ups. */
import { useEffect, useId, useState } from 'react';
import { api, ApiError } from './ui/api';
import { siteFormat } from '@lib/format';

interface Machine {
  id: string;
  name: string;
}

interface ControllerRow {
  id: string;
  machineId: string;
  machineName: string;
  name: string;
  firmware: string | null;
  lastState: 'enabled' | 'cut' | null;
  lastStateReason: string | null;
  lastSeenAt: string | null;
  online: boolean;
  revokedAt: string | null;
}

const REASON_TEXT: Record<string, string> = {
  idle: 'nobody checked in',
  machine_out_of_service: 'machine out of service',
  suspended: 'clearance suspended',
  not_cleared: 'clearance not valid',
  inactive: 'account not active',
  booking_ended: 'session over',
};

function seen(iso: string | null, timeZone: string, locale: string): string {
  if (!iso) return 'never';
  const mins = Math.round((Date.now() - new Date(iso).getTime()) / 60_000);
  if (mins < 1) return 'just now';
  if (mins < 60) return `${mins} min ago`;
  return siteFormat(locale, timeZone).dateTime(new Date(iso));
}

export default function ControllersAdmin({ machines, timeZone, locale }: { machines: Machine[]; timeZone: string; locale: string }) {
  const ids = useId();
  const [rows, setRows] = useState<ControllerRow[] | null>(null);
  const [walkUps, setWalkUps] = useState(false);
  const [machineId, setMachineId] = useState(machines[0]?.id ?? '');
  const [name, setName] = useState('');
  const [token, setToken] = useState<{ label: string; token: string } | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [saved, setSaved] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);

  async function load() {
    const r = await api<{ walkUpsAllowed: boolean; controllers: ControllerRow[] }>('/api/controllers');
    setRows(r.controllers);
    setWalkUps(r.walkUpsAllowed);
  }
  useEffect(() => {
    load().catch((e) => setError(e instanceof Error ? e.message : String(e)));
  }, []);

  async function act(work: () => Promise<void>) {
    setBusy(true);
    setError(null);
    setSaved(null);
    try {
      await work();
      await load();
    } catch (e) {
      setError(e instanceof ApiError ? e.message : 'Something went wrong; try again.');
    } finally {
      setBusy(false);
    }
  }

  const register = (e: React.FormEvent) => {
    e.preventDefault();
    void act(async () => {
      const r = await api<{ id: string; token: string }>('/api/controllers', { method: 'POST', json: { machineId, name } });
      setToken({ label: `${name} on ${machines.find((m) => m.id === machineId)?.name ?? 'the machine'}`, token: r.token });
      setName('');
    });
  };

  return (
    <section aria-labelledby={`${ids}-h`} className="min-w-0 max-w-full space-y-4">
      <h2 id={`${ids}-h`} className="text-xl">Controllers</h2>
      <p className="hint">
        A controller is the box at a machine: a badge reader and a relay on the machine’s enable line. It asks Beamwarden whether a badge may
        fire the machine now, and opens the relay on a stop fault, when the machine goes out of service, when a clearance is suspended or when
        the session is over. It is an addition to the machine’s interlocks and emergency stop, never a replacement. Wiring: see the{' '}
        <a href="/controller-api">controller API reference</a>.
      </p>
      {error && <p className="notice notice-stop" role="alert">{error}</p>}
      {token && (
        <div className="notice notice-warn space-y-2" role="status">
          <p className="font-semibold">Device token for {token.label} — shown this once</p>
          <p className="text-sm">Store it in the box now. Beamwarden keeps only a fingerprint of it; if it is lost, issue a new token.</p>
          <input className="input w-full font-mono text-sm" readOnly value={token.token} aria-label="Device token" onFocus={(e) => e.currentTarget.select()} />
          <button type="button" className="btn btn-quiet" onClick={() => setToken(null)}>I have stored it</button>
        </div>
      )}
      <form className="card flex flex-wrap items-end gap-3 p-4" onSubmit={register}>
        <label className="flex min-w-0 max-w-full flex-col gap-1 text-sm font-medium">
          Machine
          <select className="input w-full max-w-full" value={machineId} onChange={(e) => setMachineId(e.target.value)} required>
            {machines.map((m) => <option key={m.id} value={m.id}>{m.name}</option>)}
          </select>
        </label>
        <label className="flex min-w-0 max-w-full flex-col gap-1 text-sm font-medium">
          Name of the box
          <input className="input w-full max-w-full" value={name} maxLength={80} required placeholder="e.g. Laser B door box" onChange={(e) => setName(e.target.value)} />
        </label>
        <button className="btn btn-primary" disabled={busy || !machineId}>Register controller</button>
      </form>
      <fieldset className="card min-w-0 space-y-2 p-4">
        <legend className="px-1 font-medium">Without a booking</legend>
        <label className="flex items-start gap-2 text-sm">
          <input type="radio" name={`${ids}-walk`} checked={!walkUps} disabled={busy}
            onChange={() => void act(async () => { await api('/api/controllers/walk-ups', { method: 'PUT', json: { mode: 'bookings_only' } }); setSaved('Saved: a badge fires a machine only during a booking.'); })} />
          <span>Bookings only: a badge fires a machine only during the person’s booking.</span>
        </label>
        <label className="flex items-start gap-2 text-sm">
          <input type="radio" name={`${ids}-walk`} checked={walkUps} disabled={busy}
            onChange={() => void act(async () => { await api('/api/controllers/walk-ups', { method: 'PUT', json: { mode: 'walk_ups_allowed' } }); setSaved('Saved: walk-ups are allowed on free machines during opening hours.'); })} />
          <span>Walk-ups allowed: a cleared person may also start a session on a free machine during opening hours, until the next booking (at most 2 hours).</span>
        </label>
        <p role="status" className={saved ? 'text-sm font-medium text-[var(--color-ok)]' : 'sr-only'}>{saved ? `✓ ${saved}` : ''}</p>
      </fieldset>
      {rows === null ? (
        <p className="hint">Loading controllers…</p>
      ) : rows.length === 0 ? (
        <p className="hint">No controllers yet. Machines without one are gated by bookings and check-in on the phone only.</p>
      ) : (
        <div className="max-w-full overflow-x-auto">
          <table className="table">
            <caption className="sr-only">Controllers</caption>
            <thead className="hidden sm:table-header-group">
              <tr><th>Machine</th><th>Box</th><th>Relay</th><th>Last seen</th><th>Firmware</th><th><span className="sr-only">Actions</span></th></tr>
            </thead>
            <tbody>
              {rows.map((c) => (
                <tr key={c.id} data-controller={c.id} className={`block border-b border-[var(--color-line)] py-2 sm:table-row sm:border-0 sm:py-0${c.revokedAt ? ' opacity-60' : ''}`}>
                  <td className="block border-0 py-1 font-medium sm:table-cell sm:border-b sm:py-[.6rem] sm:font-normal">{c.machineName}</td>
                  <td className="block border-0 py-1 sm:table-cell sm:border-b sm:py-[.6rem]"><Label>Box</Label>{c.name}</td>
                  <td className="block border-0 py-1 sm:table-cell sm:border-b sm:py-[.6rem]">
                    <Label>Relay</Label>
                    {c.revokedAt ? '✕ Revoked'
                      : c.lastState === 'enabled' ? '● Enabled'
                      : c.lastState === 'cut' ? `○ Cut${c.lastStateReason ? ` (${REASON_TEXT[c.lastStateReason] ?? c.lastStateReason})` : ''}`
                      : '— not asked yet'}
                  </td>
                  <td className="block border-0 py-1 sm:table-cell sm:border-b sm:py-[.6rem]">
                    <Label>Last seen</Label>
                    {c.revokedAt ? '—' : <>{c.online ? '✓ Online' : '⚠ Offline'} <span className="hint">· {seen(c.lastSeenAt, timeZone, locale)}</span></>}
                  </td>
                  <td className="block border-0 py-1 sm:table-cell sm:border-b sm:py-[.6rem]"><Label>Firmware</Label><span className="font-mono text-sm">{c.firmware ?? '—'}</span></td>
                  <td className="block border-0 py-1 sm:table-cell sm:whitespace-nowrap sm:border-b sm:py-[.6rem]">
                    {!c.revokedAt && (
                      <>
                        <button type="button" className="btn btn-quiet" disabled={busy}
                          onClick={() => {
                            if (!confirm(`Issue a new token for “${c.name}”? The box stops working until the new token is stored in it.`)) return;
                            void act(async () => {
                              const r = await api<{ token: string }>(`/api/controllers/${c.id}/rotate`, { method: 'POST' });
                              setToken({ label: `${c.name} on ${c.machineName}`, token: r.token });
                            });
                          }}>New token<span className="sr-only"> for {c.name}</span></button>{' '}
                        <button type="button" className="btn btn-quiet" disabled={busy}
                          onClick={() => {
                            if (!confirm(`Revoke “${c.name}”? Its token stops working at once and cannot be restored.`)) return;
                            void act(async () => void (await api(`/api/controllers/${c.id}/revoke`, { method: 'POST' })));
                          }}>Revoke<span className="sr-only"> {c.name}</span></button>
                      </>
                    )}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      <p className="hint text-sm">A controller silent for 2 minutes while its machine is booked is e-mailed to the stewards once.</p>
    </section>
  );
}

/** The column's name in front of a value, on a phone only (the table's header row is hidden there). */
function Label({ children }: { children: string }) {
  return <span className="font-semibold text-charcoal-soft sm:hidden">{children}: </span>;
}
