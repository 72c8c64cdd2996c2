/**
 * Admin › Site › Institution sign-in: what the server's environment sets (shown, not editable; never the secret)
 * and what an admin decides (button name, claim → tier mapping, password sign-in off). Each save is audited.
 */
import { useState, type FormEvent } from 'react';
import { TIERS, TIER_LABELS, type Tier } from '@lib/vocabulary';
import { api, ApiError } from './ui/api';
import { useFieldErrors, useFormAnswer } from './ui/form-state';

export interface InstitutionView {
  configured: boolean;
  issuer: string | null;
  emailClaim: string | null;
  domains: string[];
  institutionName: string | null;
  tierClaim: string | null;
  tierMap: Record<string, Tier>;
  passwordSignInOff: boolean;
}

interface Props {
  initial: InstitutionView;
  /** the client id from the environment (not a secret); null when unset */
  clientId: string | null;
  siteName: string;
}

type Field = 'institutionName' | 'tierClaim' | 'tierMap' | 'passwordSignInOff';
interface MapRow {
  key: number;
  value: string;
  tier: Tier;
}

let nextKey = 1;
const rowsOf = (m: Record<string, Tier>): MapRow[] => Object.entries(m).map(([value, tier]) => ({ key: nextKey++, value, tier }));

export default function InstitutionSignInForm({ initial, clientId, siteName }: Props) {
  const [view, setView] = useState(initial);
  const [name, setName] = useState(initial.institutionName ?? '');
  const [tierClaim, setTierClaim] = useState(initial.tierClaim ?? '');
  const [rows, setRows] = useState<MapRow[]>(() => rowsOf(initial.tierMap));
  const [passwordOff, setPasswordOff] = useState(initial.passwordSignInOff);
  const { id, errors, setErrors, describe, fieldError } = useFieldErrors<Field>();
  const { message, setMessage, show, answer } = useFormAnswer();
  const [saving, setSaving] = useState(false);

  async function save(e: FormEvent) {
    e.preventDefault();
    setMessage(null);
    const f: Partial<Record<Field, string>> = {};
    const filled = rows.filter((r) => r.value.trim());
    const values = filled.map((r) => r.value.trim());
    if (new Set(values).size !== values.length) f.tierMap = 'Each claim value can appear only once.';
    if (filled.length && !tierClaim.trim()) f.tierClaim = 'Name the claim whose values the table below maps, e.g. affiliation.';
    if (Object.keys(f).length) {
      setErrors(f);
      show({ tone: 'stop', text: 'Please correct the fields marked above.' });
      return;
    }
    setSaving(true);
    try {
      const saved = await api<InstitutionView>('/api/institution-sign-in', {
        method: 'PUT',
        json: {
          institutionName: name.trim() || null,
          tierClaim: tierClaim.trim() || null,
          tierMap: Object.fromEntries(filled.map((r) => [r.value.trim(), r.tier])),
          passwordSignInOff: passwordOff,
        },
      });
      setErrors({});
      setView(saved);
      setName(saved.institutionName ?? '');
      setTierClaim(saved.tierClaim ?? '');
      setRows(rowsOf(saved.tierMap));
      setPasswordOff(saved.passwordSignInOff);
      show({ tone: 'ok', text: `Saved. The sign-in page now offers “Sign in with ${saved.institutionName ?? siteName}”${saved.configured ? '' : ' once the server is configured'}. The change is in the audit log.` });
    } catch (err) {
      if (err instanceof ApiError && err.fields) {
        const byField: Partial<Record<Field, string>> = {};
        for (const [k, v] of Object.entries(err.fields)) byField[k.split('.')[0] as Field] ??= v;
        setErrors(byField);
      }
      show({ tone: 'stop', text: err instanceof ApiError ? err.message : 'The settings were not saved.' });
    } finally {
      setSaving(false);
    }
  }


  return (
    <section className="mt-8" aria-labelledby={`${id}-h`}>
      <h2 id={`${id}-h`} className="text-xl">Institution sign-in</h2>
      <p className="hint mb-4">People of your college or university can sign in with their institution account (OpenID Connect) instead of a password here. A new person who signs in this way becomes a member.</p>

      <div className="card mb-4 p-5" data-testid="institution-environment">
        <h3 className="text-base">Set by the server’s environment</h3>
        <p className="mb-3">
          {view.configured
            ? <span className="status status-ok">Configured</span>
            : <span className="status status-warn">Not configured</span>}{' '}
          {view.configured
            ? 'The sign-in page shows the institution button.'
            : 'The sign-in page shows no institution button. Whoever runs the server sets OIDC_ISSUER, OIDC_CLIENT_ID and OIDC_CLIENT_SECRET, then restarts it.'}
        </p>
        <dl className="grid gap-x-4 gap-y-1 text-sm sm:grid-cols-[max-content_1fr]">
          <dt className="font-semibold">Identity provider (issuer)</dt>
          <dd className="break-all">{view.issuer ?? 'not set'}</dd>
          <dt className="font-semibold">Client id</dt>
          <dd className="break-all">{clientId ?? 'not set'}</dd>
          <dt className="font-semibold">Client secret</dt>
          <dd>{view.configured ? 'set (never shown)' : 'not set'}</dd>
          <dt className="font-semibold">Claim with the e-mail</dt>
          <dd className="break-all">{view.emailClaim ?? 'email'}</dd>
          <dt className="font-semibold">Accepted e-mail domains</dt>
          <dd className="break-all">{view.domains.length ? view.domains.join(', ') : 'none (nobody can sign in this way)'}</dd>
        </dl>
        <p className="hint mt-3">These cannot be changed here: they live in the server’s environment (OIDC_* variables).</p>
      </div>

      <form className="card space-y-5 p-5" onSubmit={save} noValidate>
        <h3 className="text-base">Decided here</h3>
        <div className="field">
          <label htmlFor={`${id}-institution-name-on`} className="text-[.95rem] font-semibold">Institution name on the sign-in button</label>
          <input id={`${id}-institution-name-on`} className="input" value={name} maxLength={120} placeholder={siteName} onChange={(e) => setName(e.target.value)} aria-invalid={errors.institutionName ? 'true' : undefined} aria-describedby={describe('institutionName', `${id}-name-hint`)} />
          {fieldError('institutionName')}
          <span id={`${id}-name-hint`} className="hint font-normal">The button reads “Sign in with {name.trim() || siteName}”. Leave empty to use the site name.</span>
        </div>

        <div className="field">
          <label htmlFor={`${id}-claim-that-decides-t`} className="text-[.95rem] font-semibold">Claim that decides the pricing tier</label>
          <input id={`${id}-claim-that-decides-t`} className="input" value={tierClaim} maxLength={100} placeholder="e.g. affiliation" autoComplete="off" spellCheck={false} onChange={(e) => setTierClaim(e.target.value)} aria-invalid={errors.tierClaim ? 'true' : undefined} aria-describedby={describe('tierClaim', `${id}-claim-hint`)} />
          {fieldError('tierClaim')}
          <span id={`${id}-claim-hint`} className="hint font-normal">Only for people new to this site; an existing person keeps their tier. Leave empty and every new person is Community.</span>
        </div>

        <fieldset className="space-y-2" aria-describedby={describe('tierMap', `${id}-map-hint`)}>
          <legend className="font-semibold">Claim value → tier</legend>
          <p id={`${id}-map-hint`} className="hint">A person whose claim has none of these values gets Community.</p>
          {rows.map((r, i) => (
            <div key={r.key} className="flex flex-wrap items-end gap-2" data-testid="tier-map-row">
              <label className="field min-w-40 flex-1">
                <span className="text-sm">Value {i + 1}</span>
                <input className="input" value={r.value} maxLength={200} autoComplete="off" spellCheck={false}
                  onChange={(e) => setRows((rs) => rs.map((x) => (x.key === r.key ? { ...x, value: e.target.value } : x)))} />
              </label>
              <label className="field">
                <span className="text-sm">Tier for value {i + 1}</span>
                <select className="input" value={r.tier} onChange={(e) => setRows((rs) => rs.map((x) => (x.key === r.key ? { ...x, tier: e.target.value as Tier } : x)))}>
                  {TIERS.map((t) => <option key={t} value={t}>{TIER_LABELS[t]}</option>)}
                </select>
              </label>
              <button type="button" className="btn" onClick={() => setRows((rs) => rs.filter((x) => x.key !== r.key))}>Remove<span className="sr-only"> value {i + 1}</span></button>
            </div>
          ))}
          {fieldError('tierMap')}
          <button type="button" className="btn" disabled={rows.length >= 50} onClick={() => setRows((rs) => [...rs, { key: nextKey++, value: '', tier: 'student' }])}>Add a value</button>
        </fieldset>

        <label className="flex items-start gap-2">
          <input type="checkbox" className="mt-1 h-4 w-4 accent-[var(--color-ember)]" checked={passwordOff} onChange={(e) => setPasswordOff(e.target.checked)} aria-describedby={`${id}-off-hint`} />
          <span>
            <span className="font-semibold">Turn off password sign-in for the institution’s domains</span>
            <span id={`${id}-off-hint`} className="hint block">People with an address in {view.domains.length ? view.domains.join(', ') : 'the accepted domains'} must then use the institution button. Everyone else keeps signing in with a password.</span>
          </span>
        </label>

        <div className="flex flex-wrap items-center gap-3">
          <button type="submit" className="btn btn-primary" disabled={saving}>{saving ? 'Saving…' : 'Save institution sign-in'}</button>
          <p ref={answer} tabIndex={-1} aria-live="polite" role="status" data-testid="institution-answer" className={message ? `notice notice-${message.tone} m-0 flex-1` : 'sr-only'}>{message?.text ?? ''}</p>
        </div>
      </form>
    </section>
  );
}
