/**
 * Machine groups: the validity period and refresher rule (set by an admin) and the practical
 * checklist (set by instructors and admins) of each group a clearance covers.
 */
import { useEffect, useState } from 'react';
import { REFRESHER_LABELS, REFRESHER_RULES, type RefresherRule } from '@lib/clearance-rules';
import { api, ApiError } from './ui/api';

interface Group { id: string; name: string; validityDays: number; refresher: RefresherRule; checklist: string[]; machines: { name: string; requiredLevel: string }[] }

export default function GroupSettings({ isAdmin }: { isAdmin: boolean }) {
  const [groups, setGroups] = useState<Group[] | null>(null);
  const [error, setError] = useState<string | null>(null);
  useEffect(() => {
    api<{ groups: Group[] }>('/api/machine-groups').then((g) => setGroups(g.groups)).catch((e) => setError(e instanceof ApiError ? e.message : 'Could not load the groups.'));
  }, []);
  if (error) return <p className="notice notice-stop" role="alert">{error}</p>;
  if (!groups) return <p className="hint">Loading…</p>;
  return (
    <ul className="grid grid-cols-1 gap-4 lg:grid-cols-2">
      {groups.map((g) => <li key={g.id}><GroupCard group={g} isAdmin={isAdmin} /></li>)}
    </ul>
  );
}

function GroupCard({ group, isAdmin }: { group: Group; isAdmin: boolean }) {
  const [validity, setValidity] = useState(String(group.validityDays));
  const [refresher, setRefresher] = useState<RefresherRule>(group.refresher);
  const [checklist, setChecklist] = useState(group.checklist.join('\n'));
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);

  async function save(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setMessage(null);
    const items = checklist.split('\n').map((s) => s.trim()).filter(Boolean);
    const patch = isAdmin ? { validityDays: Number(validity), refresher, checklist: items } : { checklist: items };
    try {
      await api(`/api/machine-groups/${group.id}`, { method: 'PATCH', json: patch });
      setMessage({ tone: 'ok', text: 'Saved. New sign-offs use these settings; existing expiry dates stay as they were.' });
    } catch (err) {
      const fields = err instanceof ApiError && err.fields ? ` ${Object.values(err.fields).join(' ')}` : '';
      setMessage({ tone: 'stop', text: `${err instanceof ApiError ? err.message : 'Could not save.'}${fields}` });
    } finally {
      setBusy(false);
    }
  }

  return (
    <form className="card space-y-3 p-5" onSubmit={save} aria-label={group.name}>
      <div>
        <h2 className="text-xl">{group.name}</h2>
        <p className="hint">{group.machines.map((m) => `${m.name}${m.requiredLevel === 'advanced' ? ' (advanced)' : ''}`).join(', ') || 'No machines assigned'}</p>
      </div>
      <div className="grid gap-3 sm:grid-cols-2">
        <label className="field">
          <span>Validity (days)</span>
          <input className="input" type="number" min={1} max={3660} value={validity} disabled={!isAdmin} onChange={(e) => setValidity(e.target.value)} />
        </label>
        <label className="field">
          <span>When it lapses</span>
          <select className="input" value={refresher} disabled={!isAdmin} onChange={(e) => setRefresher(e.target.value as RefresherRule)}>
            {REFRESHER_RULES.map((r) => <option key={r} value={r}>{REFRESHER_LABELS[r]}</option>)}
          </select>
        </label>
      </div>
      {!isAdmin && <p className="hint">Only an admin changes the validity and the refresher rule.</p>}
      <label className="field">
        <span>Practical checklist (one item per line)</span>
        <textarea className="input" rows={Math.max(4, group.checklist.length + 1)} value={checklist} onChange={(e) => setChecklist(e.target.value)} />
      </label>
      {message && <p className={`notice notice-${message.tone}`} role={message.tone === 'stop' ? 'alert' : 'status'}>{message.text}</p>}
      <button type="submit" className="btn btn-primary" disabled={busy}>Save {group.name}</button>
    </form>
  );
}
