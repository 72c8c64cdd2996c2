/** Admin › Site: the site's name, time zone, site locale, currency, tax and public address. Each save is audited. */
import { useEffect, useState, type FormEvent } from 'react';
import { api, ApiError } from './ui/api';
import { useFieldErrors, type Answer } from './ui/form-state';
import { isLocale, siteFormat } from '@lib/format';
import type { SiteValues } from '@lib/site-settings';

type Field = keyof SiteValues;

interface Props {
  initial: SiteValues;
  environmentBaseUrl: string;
  /** The server's lists (the server validates against them), so server and browser render the same. */
  zones: string[];
  codes: { code: string; label: string }[];
  /** Suggested site locales with their names; any other tag Intl supports is accepted too. */
  locales: { tag: string; label: string }[];
}

export default function SiteSettingsForm({ initial, environmentBaseUrl, zones, codes, locales }: Props) {
  const [name, setName] = useState(initial.name);
  const [timeZone, setTimeZone] = useState(initial.timeZone);
  const [locale, setLocale] = useState(initial.locale);
  const [currency, setCurrency] = useState(initial.currency);
  const [tax, setTax] = useState(String(initial.taxRatePercent));
  const [inclusive, setInclusive] = useState(initial.pricesIncludeTax);
  const [baseUrl, setBaseUrl] = useState(initial.publicBaseUrl ?? '');
  const { id, errors, setErrors, describe, fieldError } = useFieldErrors<Field>();
  const [message, setMessage] = useState<Answer | null>(null);
  const [saving, setSaving] = useState(false);
  const [now, setNow] = useState<string | null>(null);
  // the clock in the chosen zone and locale is shown only in the browser (the server's render has none, so both agree)
  useEffect(() => {
    try {
      const f = siteFormat(isLocale(locale.trim()) ? locale.trim() : initial.locale, timeZone);
      setNow(`${f.longDate(new Date())}, ${f.time(new Date())} · ${f.number(1234567.89)} · ${f.money(123456, currency)}`);
    } catch {
      setNow(null);
    }
  }, [timeZone, locale, currency, initial.locale]);

  async function save(e: FormEvent) {
    e.preventDefault();
    setMessage(null);
    const candidate = {
      name,
      timeZone,
      locale: locale.trim(),
      currency,
      taxRatePercent: tax.trim() === '' ? Number.NaN : Number(tax.replace(',', '.')),
      pricesIncludeTax: inclusive,
      publicBaseUrl: baseUrl.trim() === '' ? null : baseUrl,
    };
    // quick checks here; the server checks everything again and answers per field
    const f: Partial<Record<Field, string>> = {};
    if (!name.trim()) f.name = 'Enter the name of the site.';
    if (!zones.includes(timeZone.trim())) f.timeZone = 'Choose an IANA time zone such as Pacific/Auckland or Europe/London.';
    if (!isLocale(locale.trim())) f.locale = 'Use a language tag this server knows, such as en-NZ, en-GB or de-DE (language, then region).';
    if (!Number.isFinite(candidate.taxRatePercent)) f.taxRatePercent = 'Enter the tax rate as a number of percent, e.g. 15.';
    if (Object.keys(f).length) {
      setErrors(f);
      setMessage({ tone: 'stop', text: 'Please correct the fields marked below.' });
      return;
    }
    setSaving(true);
    try {
      const saved = await api<SiteValues>('/api/site', { method: 'PUT', json: candidate });
      setErrors({});
      setName(saved.name);
      setCurrency(saved.currency);
      setLocale(saved.locale);
      setBaseUrl(saved.publicBaseUrl ?? '');
      document.querySelectorAll('[data-site-name]').forEach((el) => {
        el.textContent = `· ${saved.name}`;
      });
      setMessage({ tone: 'ok', text: 'Saved. The change is in the audit log.' });
    } catch (err) {
      if (err instanceof ApiError && err.fields) setErrors(err.fields as Partial<Record<Field, string>>);
      setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'The settings were not saved.' });
    } finally {
      setSaving(false);
    }
  }


  return (
    <form className="card space-y-5 p-5" onSubmit={save} noValidate>
      <p aria-live="polite" role="status" className={message ? `notice notice-${message.tone}` : 'sr-only'}>{message?.text ?? ''}</p>
      <label className="field">
        <span>Site name</span>
        <input className="input" value={name} maxLength={120} required onChange={(e) => setName(e.target.value)} aria-invalid={errors.name ? 'true' : undefined} aria-describedby={describe('name')} />
        {fieldError('name')}
      </label>
      <label className="field">
        <span>Time zone (IANA)</span>
        <input className="input" list={`${id}-zones`} value={timeZone} onChange={(e) => setTimeZone(e.target.value)} aria-invalid={errors.timeZone ? 'true' : undefined} aria-describedby={describe('timeZone') ?? `${id}-tz-hint`} autoComplete="off" spellCheck={false} />
        <datalist id={`${id}-zones`}>
          {zones.map((z) => <option key={z} value={z} />)}
        </datalist>
        {fieldError('timeZone')}
        <span id={`${id}-tz-hint`} className="hint font-normal">Opening hours, bookings, reports and the audit log are shown in this zone.</span>
      </label>
      <label className="field">
        <span>Site locale (language and region)</span>
        <input className="input" list={`${id}-locales`} value={locale} maxLength={35} onChange={(e) => setLocale(e.target.value)} aria-invalid={errors.locale ? 'true' : undefined} aria-describedby={describe('locale') ?? `${id}-locale-hint`} autoComplete="off" spellCheck={false} />
        <datalist id={`${id}-locales`}>
          {locales.map((l) => <option key={l.tag} value={l.tag}>{l.label}</option>)}
        </datalist>
        {fieldError('locale')}
        <span id={`${id}-locale-hint`} className="hint font-normal">Every date, time, number and amount is written this way, on screens, in e-mails and on receipts (e.g. en-NZ, en-GB, de-DE).{now && ` Example: ${now}.`}</span>
      </label>
      <label className="field">
        <span>Currency (ISO 4217)</span>
        <select className="input" value={currency} onChange={(e) => setCurrency(e.target.value)} aria-invalid={errors.currency ? 'true' : undefined} aria-describedby={describe('currency')}>
          {!codes.some((c) => c.code === currency) && <option value={currency}>{currency}</option>}
          {codes.map((c) => <option key={c.code} value={c.code}>{c.code} — {c.label}</option>)}
        </select>
        {fieldError('currency')}
        <span className="hint font-normal">Prices are kept in this currency. It can change only until the first charge is made, and prices are not converted: make a new price version on Pricing afterwards.</span>
      </label>
      <fieldset className="grid gap-4 sm:grid-cols-2">
        <legend className="sr-only">Tax</legend>
        <label className="field">
          <span>Tax rate (%)</span>
          <input className="input" inputMode="decimal" value={tax} onChange={(e) => setTax(e.target.value)} aria-invalid={errors.taxRatePercent ? 'true' : undefined} aria-describedby={describe('taxRatePercent')} />
          {fieldError('taxRatePercent')}
        </label>
        <div className="field" role="radiogroup" aria-label="Prices and tax">
          <span>Prices are entered</span>
          <label className="inline-flex min-h-8 items-center gap-2 font-normal">
            <input type="radio" name={`${id}-incl`} className="h-4 w-4 accent-[var(--color-ember)]" checked={inclusive} onChange={() => setInclusive(true)} />
            including tax
          </label>
          <label className="inline-flex min-h-8 items-center gap-2 font-normal">
            <input type="radio" name={`${id}-incl`} className="h-4 w-4 accent-[var(--color-ember)]" checked={!inclusive} onChange={() => setInclusive(false)} />
            before tax (tax added on top)
          </label>
        </div>
        <p className="hint sm:col-span-2">Every charge uses the tax set here at the moment it is made (beam time, fees, sheets); each receipt shows the rate it used. Charges already made keep theirs.</p>
      </fieldset>
      <label className="field">
        <span>Public address (printed on QR labels)</span>
        <input className="input" type="url" inputMode="url" value={baseUrl} placeholder={environmentBaseUrl} onChange={(e) => setBaseUrl(e.target.value)} aria-invalid={errors.publicBaseUrl ? 'true' : undefined} aria-describedby={describe('publicBaseUrl')} />
        {fieldError('publicBaseUrl')}
        <span className="hint font-normal">Leave empty to use the server’s setting ({environmentBaseUrl}). Reprint the labels after changing it.</span>
      </label>
      <button type="submit" className="btn btn-primary" disabled={saving}>{saving ? 'Saving…' : 'Save settings'}</button>
    </form>
  );
}
