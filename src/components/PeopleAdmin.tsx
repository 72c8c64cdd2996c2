/** Admin › People: search, sort and page through people; grant or remove roles (each change is audited). */
import { siteFormat } from '@lib/format';
import { Pager } from './ui/Pager';
import { useCallback, useEffect, useId, useState } from 'react';
import { ROLES, ROLE_LABELS, type Role } from '@lib/roles';
import { api, ApiError } from './ui/api';
import { useSettledText } from './ui/useSettledText';
import { TIERS, TIER_LABELS, type Tier } from '@lib/vocabulary';
import InvitePersonForm from './InvitePersonForm';

interface PersonRow {
  id: string;
  email: string;
  name: string;
  roles: Role[];
  active: boolean;
  createdAt: string;
  tier: Tier;
  costCentre: string | null;
  /** invited by an admin and no password chosen yet */
  awaitingInvitation: boolean;
}
interface PageData {
  total: number;
  page: number;
  pageSize: number;
  rows: PersonRow[];
}
type Sort = 'name' | 'email' | 'created';

export default function PeopleAdmin({ selfId, timeZone = 'UTC', locale }: { selfId: string; timeZone?: string; locale: string }) {
  const [q, setQ] = useState('');
  const [query, setQuery] = useState('');
  const [roleFilter, setRoleFilter] = useState<Role | ''>('');
  const [sort, setSort] = useState<Sort>('name');
  const [dir, setDir] = useState<'asc' | 'desc'>('asc');
  const [page, setPage] = useState(1);
  const [data, setData] = useState<PageData | null>(null);
  const [loading, setLoading] = useState(true);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState<string | null>(null);
  const [inviteKey, setInviteKey] = useState(0);
  const searchId = useId();
  const pageSize = 20;

  useSettledText(q, (text) => {
    setQuery(text);
    setPage(1);
  });

  const load = useCallback(async () => {
    setLoading(true);
    const params = new URLSearchParams({ page: String(page), pageSize: String(pageSize), sort, dir });
    if (query) params.set('q', query);
    if (roleFilter) params.set('role', roleFilter);
    try {
      setData(await api<PageData>(`/api/people?${params}`));
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'Could not load people.' });
    } finally {
      setLoading(false);
    }
  }, [page, sort, dir, query, roleFilter]);

  useEffect(() => {
    void load();
  }, [load]);

  async function toggle(person: PersonRow, role: Role, on: boolean) {
    const roles = on ? [...person.roles, role] : person.roles.filter((r) => r !== role);
    setBusy(`${person.id}:${role}`);
    setMessage(null);
    try {
      const updated = await api<PersonRow>(`/api/people/${person.id}/roles`, { method: 'PUT', json: { roles } });
      setData((d) => (d ? { ...d, rows: d.rows.map((r) => (r.id === person.id ? { ...r, roles: updated.roles } : r)) } : d));
      setMessage({ tone: 'ok', text: `${person.name}: ${on ? 'granted' : 'removed'} ${ROLE_LABELS[role]}.` });
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'The change was not saved.' });
    } finally {
      setBusy(null);
    }
  }

  // Deactivate / reactivate (admin): a deactivated person cannot sign in; their session ends at once.
  async function setActive(person: PersonRow, active: boolean) {
    const verb = active ? 'reactivate' : 'deactivate';
    if (!active && !window.confirm(`Deactivate ${person.name}? They are signed out at once and cannot sign in until reactivated.`)) return;
    setBusy(`${person.id}:active`);
    setMessage(null);
    try {
      const updated = await api<PersonRow>(`/api/people/${person.id}/${verb}`, { method: 'POST' });
      setData((d) => (d ? { ...d, rows: d.rows.map((r) => (r.id === person.id ? { ...r, active: updated.active } : r)) } : d));
      setMessage({ tone: 'ok', text: `${person.name}: ${active ? 'reactivated' : 'deactivated'}.` });
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'The change was not saved.' });
    } finally {
      setBusy(null);
    }
  }

  // A person invited by an admin who has not chosen a password yet: a new link replaces the old one.
  async function resendInvitation(person: PersonRow) {
    setBusy(`${person.id}:invite`);
    setMessage(null);
    try {
      const r = await api<{ email: string; name: string; expiresInDays: number }>(`/api/people/${person.id}/invitation`, { method: 'POST' });
      setMessage({ tone: 'ok', text: `A new invitation went to ${r.name} <${r.email}>. Its link works for ${r.expiresInDays} days; the link in any earlier invitation no longer works.` });
      setInviteKey((k) => k + 1);
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'The invitation was not sent.' });
      if (e instanceof ApiError && e.status === 409) void load();
    } finally {
      setBusy(null);
    }
  }

  async function saveTier(person: PersonRow, tier: Tier, costCentre: string | null) {
    setBusy(`${person.id}:tier`);
    setMessage(null);
    try {
      const updated = await api<{ tier: Tier; costCentre: string | null }>(`/api/people/${person.id}/tier`, { method: 'PUT', json: { tier, costCentre } });
      setData((d) => (d ? { ...d, rows: d.rows.map((r) => (r.id === person.id ? { ...r, tier: updated.tier, costCentre: updated.costCentre } : r)) } : d));
      setMessage({ tone: 'ok', text: `${person.name}: tier ${TIER_LABELS[updated.tier]}${updated.costCentre ? `, cost centre ${updated.costCentre}` : ''}.` });
    } catch (e) {
      setMessage({ tone: 'stop', text: e instanceof ApiError ? e.message : 'The change was not saved.' });
    } finally {
      setBusy(null);
    }
  }

  function sortBy(column: Sort) {
    if (sort === column) setDir(dir === 'asc' ? 'desc' : 'asc');
    else {
      setSort(column);
      setDir('asc');
    }
    setPage(1);
  }

  const pages = data ? Math.max(1, Math.ceil(data.total / pageSize)) : 1;
  const sortMark = (c: Sort) => (sort === c ? (dir === 'asc' ? ' ▲' : ' ▼') : '');
  const ariaSort = (c: Sort) => (sort === c ? (dir === 'asc' ? 'ascending' : 'descending') : 'none');

  return (
    <div className="space-y-4">
      {/* a new key after a resend from a row: the form starts clean instead of keeping its old refusal */}
      <InvitePersonForm key={inviteKey} onInvited={() => void load()} onTaken={setQ} />
      <h2 className="sr-only">Everyone</h2>
      <div className="flex flex-wrap items-end gap-3">
        <label className="field min-w-64 flex-1" htmlFor={searchId}>
          <span>Search by name or e-mail</span>
          <input id={searchId} className="input" type="search" value={q} onChange={(e) => setQ(e.target.value)} maxLength={200} />
        </label>
        <label className="field">
          <span>Role</span>
          <select className="input" value={roleFilter} onChange={(e) => { setRoleFilter(e.target.value as Role | ''); setPage(1); }}>
            <option value="">Any role</option>
            {ROLES.map((r) => (
              <option key={r} value={r}>{ROLE_LABELS[r]}</option>
            ))}
          </select>
        </label>
      </div>
      <p aria-live="polite" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      <div className="card overflow-x-auto">
        <table className="table" aria-busy={loading}>
          <caption className="sr-only">People and their roles</caption>
          <thead>
            <tr>
              <th aria-sort={ariaSort('name')}><button type="button" className="font-semibold" onClick={() => sortBy('name')}>Name{sortMark('name')}</button></th>
              <th className="hidden md:table-cell" aria-sort={ariaSort('email')}><button type="button" className="font-semibold" onClick={() => sortBy('email')}>E-mail{sortMark('email')}</button></th>
              <th>Roles</th>
              <th>Tier and cost centre</th>
              <th className="hidden md:table-cell" aria-sort={ariaSort('created')}><button type="button" className="font-semibold" onClick={() => sortBy('created')}>Joined{sortMark('created')}</button></th>
            </tr>
          </thead>
          <tbody>
            {data?.rows.map((p) => (
              <tr key={p.id} data-person={p.email}>
                <td className="font-medium">
                  {p.name}{!p.active && <span className="status status-stop ml-2">Deactivated</span>}
                  <span className="block break-all text-sm font-normal text-charcoal-soft md:hidden">{p.email}</span>
                  {p.awaitingInvitation && p.active && (
                    <span className="mt-1 block text-sm font-normal" data-testid="awaiting-invitation">
                      <span className="status status-warn">✉ Invited, no password yet</span>
                      <button type="button" className="flex min-h-8 items-center text-sm font-normal text-ember-dark underline disabled:opacity-50" disabled={busy !== null} onClick={() => void resendInvitation(p)}>
                        {busy === `${p.id}:invite` ? 'Sending…' : 'Send a new invitation'}<span className="sr-only"> to {p.name}</span>
                      </button>
                    </span>
                  )}
                  {p.id !== selfId && (
                    <button type="button" className="mt-1 flex min-h-8 items-center text-sm font-normal text-ember-dark underline disabled:opacity-50" disabled={busy !== null} onClick={() => void setActive(p, !p.active)}>
                      {p.active ? 'Deactivate' : 'Reactivate'}<span className="sr-only"> {p.name}</span>
                    </button>
                  )}
                </td>
                <td className="hidden break-all md:table-cell">{p.email}</td>
                <td>
                  <fieldset className="flex flex-wrap gap-x-4 gap-y-1">
                    <legend className="sr-only">Roles of {p.name}</legend>
                    {ROLES.map((r) => {
                      const checked = p.roles.includes(r);
                      const lockSelf = p.id === selfId && r === 'admin' && checked;
                      return (
                        <label key={r} className="inline-flex min-h-8 items-center gap-1.5 text-sm">
                          <input
                            type="checkbox"
                            className="h-4 w-4 accent-[var(--color-ember)]"
                            checked={checked}
                            disabled={busy !== null || lockSelf}
                            title={lockSelf ? 'You cannot remove your own admin role' : undefined}
                            onChange={(e) => void toggle(p, r, e.target.checked)}
                          />
                          {ROLE_LABELS[r]}
                        </label>
                      );
                    })}
                  </fieldset>
                </td>
                <td>
                  <div className="flex flex-col gap-1">
                    <select className="input" aria-label={`Tier of ${p.name}`} value={p.tier} disabled={busy !== null}
                      onChange={(e) => void saveTier(p, e.target.value as Tier, p.costCentre)}>
                      {TIERS.map((t) => <option key={t} value={t}>{TIER_LABELS[t]}</option>)}
                    </select>
                    <input className="input w-32" aria-label={`Cost centre of ${p.name}`} placeholder="Cost centre" defaultValue={p.costCentre ?? ''} maxLength={40}
                      onBlur={(e) => { const v = e.target.value.trim() || null; if (v !== p.costCentre) void saveTier(p, p.tier, v); }} />
                  </div>
                </td>
                <td className="hidden whitespace-nowrap text-sm md:table-cell">{siteFormat(locale, timeZone).date(new Date(p.createdAt))}</td>
              </tr>
            ))}
            {data && data.rows.length === 0 && (
              <tr><td colSpan={5} className="text-center text-charcoal-soft">Nobody matches.</td></tr>
            )}
          </tbody>
        </table>
      </div>
      <Pager total={data ? data.total : null} noun={['person', 'people']} page={page} pages={pages} onPage={setPage} />
    </div>
  );
}
