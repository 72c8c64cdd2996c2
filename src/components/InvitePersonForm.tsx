/** Admin › People: invite a person. The server makes the account without a password and e-mails a link to choose one. */
import { useState, type FormEvent } from 'react';
import { ROLES, ROLE_LABELS, type Role } from '@lib/roles';
import { TIERS, TIER_LABELS, type Tier } from '@lib/vocabulary';
import { api, ApiError } from './ui/api';
import { useFieldErrors, useFormAnswer } from './ui/form-state';

type Field = 'name' | 'email' | 'roles' | 'tier';

/**
 * `onTaken` hears the address when it already has an account, so the list below can show that person (and their
 * "Send a new invitation" when they have not chosen a password yet).
 */
export default function InvitePersonForm({ onInvited, onTaken }: { onInvited?: () => void; onTaken?: (email: string) => void }) {
  const [name, setName] = useState('');
  const [email, setEmail] = useState('');
  const [roles, setRoles] = useState<Role[]>(['member']);
  const [tier, setTier] = useState<Tier>('community');
  const { id, errors, setErrors, describe, fieldError } = useFieldErrors<Field>();
  const { message, setMessage, show, answer } = useFormAnswer();
  const [sending, setSending] = useState(false);

  async function submit(e: FormEvent) {
    e.preventDefault();
    setMessage(null);
    const f: Partial<Record<Field, string>> = {};
    if (!name.trim()) f.name = 'Enter the person’s name.';
    if (!/^[^@\s]+@[^@\s]+\.[^@\s]+$/.test(email.trim())) f.email = 'Enter an e-mail address such as ana@example.org.';
    if (Object.keys(f).length) {
      setErrors(f);
      show({ tone: 'stop', text: 'Please correct the fields marked above.' });
      return;
    }
    setSending(true);
    try {
      const p = await api<{ name: string; email: string }>('/api/people', { method: 'POST', json: { name: name.trim(), email: email.trim(), roles, tier } });
      setErrors({});
      setName('');
      setEmail('');
      setRoles(['member']);
      setTier('community');
      show({ tone: 'ok', text: `Invitation sent to ${p.name} <${p.email}>. The link to choose a password works for a few days; until then the account cannot sign in.` });
      onInvited?.();
    } catch (err) {
      if (err instanceof ApiError && err.code === 'email_taken') {
        setErrors({ email: err.message });
        if (onTaken) {
          onTaken(email.trim());
          show({ tone: 'stop', text: `${err.message} They are shown in the list below.` });
          return;
        }
      } else if (err instanceof ApiError && err.fields) {
        const byField: Partial<Record<Field, string>> = {};
        for (const [k, v] of Object.entries(err.fields)) byField[(k.split('.')[0] as Field) ?? 'name'] ??= v;
        setErrors(byField);
      }
      show({ tone: 'stop', text: err instanceof ApiError ? err.message : 'The invitation was not sent.' });
    } finally {
      setSending(false);
    }
  }


  return (
    <section className="card p-5" aria-labelledby={`${id}-h`}>
      <h2 id={`${id}-h`} className="text-lg">Invite a person</h2>
      <p className="hint mb-4">They get an e-mail with a link to choose their own password. You never see or send a password.</p>
      <form className="space-y-4" onSubmit={submit} noValidate>
        <div className="grid gap-4 md:grid-cols-2">
          <div className="field">
            <label htmlFor={`${id}-name`} className="text-[.95rem] font-semibold">Name</label>
            <input id={`${id}-name`} className="input" value={name} maxLength={120} autoComplete="off" onChange={(e) => setName(e.target.value)} aria-invalid={errors.name ? 'true' : undefined} aria-describedby={describe('name')} />
            {fieldError('name')}
          </div>
          <div className="field">
            <label htmlFor={`${id}-e-mail`} className="text-[.95rem] font-semibold">E-mail</label>
            <input id={`${id}-e-mail`} className="input" type="email" value={email} maxLength={254} autoComplete="off" spellCheck={false} onChange={(e) => setEmail(e.target.value)} aria-invalid={errors.email ? 'true' : undefined} aria-describedby={describe('email')} />
            {fieldError('email')}
          </div>
        </div>
        <div className="grid gap-4 md:grid-cols-2">
          <fieldset className="field" aria-describedby={describe('roles')}>
            <legend className="mb-1 font-semibold">Roles</legend>
            <div className="flex flex-wrap gap-x-4 gap-y-1">
              {ROLES.map((r) => (
                <label key={r} className="inline-flex min-h-8 items-center gap-1.5 text-sm font-normal">
                  <input type="checkbox" className="h-4 w-4 accent-[var(--color-ember)]" checked={roles.includes(r)}
                    onChange={(e) => setRoles((rs) => (e.target.checked ? [...rs, r] : rs.filter((x) => x !== r)))} />
                  {ROLE_LABELS[r]}
                </label>
              ))}
            </div>
            {fieldError('roles')}
          </fieldset>
          <div className="field">
            <label htmlFor={`${id}-pricing-tier`} className="text-[.95rem] font-semibold">Pricing tier</label>
            <select id={`${id}-pricing-tier`} className="input" value={tier} onChange={(e) => setTier(e.target.value as Tier)} aria-invalid={errors.tier ? 'true' : undefined} aria-describedby={describe('tier')}>
              {TIERS.map((t) => <option key={t} value={t}>{TIER_LABELS[t]}</option>)}
            </select>
            {fieldError('tier')}
          </div>
        </div>
        <div className="flex flex-wrap items-center gap-3">
          <button type="submit" className="btn btn-primary" disabled={sending}>{sending ? 'Sending…' : 'Send invitation'}</button>
          <p ref={answer} tabIndex={-1} aria-live="polite" role="status" data-testid="invite-answer" className={message ? `notice notice-${message.tone} m-0 flex-1` : 'sr-only'}>{message?.text ?? ''}</p>
        </div>
      </form>
    </section>
  );
}
