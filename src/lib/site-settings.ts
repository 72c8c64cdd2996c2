/**
 * Site settings: the shape an admin edits on the Site screen, validated the same way in the browser
 * and on the server. Pure (no I/O).
 */
import { z } from '@lib/zod';
import { isLocale } from './format';

/** IANA time zones this runtime knows, plus UTC (which Intl lists only under its Etc/ aliases). */
export function timeZones(): string[] {
  const list = typeof Intl.supportedValuesOf === 'function' ? Intl.supportedValuesOf('timeZone') : [];
  return list.includes('UTC') ? list : ['UTC', ...list];
}

export function isTimeZone(name: string): boolean {
  return timeZones().includes(name);
}

/** ISO 4217 currency codes this runtime knows. */
export function currencies(): string[] {
  return typeof Intl.supportedValuesOf === 'function' ? Intl.supportedValuesOf('currency') : [];
}

export function isCurrency(code: string): boolean {
  return currencies().includes(code);
}

/** Locales offered on the Site screen (any other tag Intl supports may be typed in). */
const SUGGESTED_LOCALES = [
  'en-NZ', 'en-AU', 'en-GB', 'en-IE', 'en-US', 'en-CA', 'en-IN', 'en-ZA', 'mi-NZ', 'de-DE', 'de-AT', 'de-CH', 'fr-FR', 'fr-CA', 'es-ES',
  'es-MX', 'it-IT', 'nl-NL', 'pt-PT', 'pt-BR', 'sv-SE', 'nb-NO', 'da-DK', 'fi-FI', 'pl-PL', 'cs-CZ', 'ja-JP', 'ko-KR', 'zh-CN', 'zh-TW', 'hi-IN', 'ar-BH',
];

/** The suggested locales this runtime supports, each with its English name ("de-DE — German (Germany)"). */
export function localeChoices(): { tag: string; label: string }[] {
  const names = new Intl.DisplayNames(['en'], { type: 'language' });
  return SUGGESTED_LOCALES.filter(isLocale).map((tag) => ({ tag, label: names.of(tag) ?? tag }));
}

/** "de-de" → "de-DE"; null when the text is not a well-formed BCP 47 tag that Intl supports. */
export function canonicalLocale(text: string): string | null {
  try {
    const [tag] = Intl.getCanonicalLocales(text.trim());
    return tag && isLocale(tag) ? tag : null;
  } catch {
    return null;
  }
}

/** A public base URL: http(s), a host, an optional path; no query or fragment; no trailing slash kept. */
export function normaliseBaseUrl(raw: string): string | null {
  let u: URL;
  try {
    u = new URL(raw.trim());
  } catch {
    return null;
  }
  if (u.protocol !== 'http:' && u.protocol !== 'https:') return null;
  if (u.search || u.hash || u.username || u.password || !u.hostname) return null;
  const text = `${u.protocol}//${u.host}${u.pathname}`.replace(/\/+$/, '');
  return text.length <= 300 ? text : null;
}

export const siteSettingsInput = z
  .object({
    name: z.string().trim().min(1, 'Enter the name of the site.').max(120, 'Use at most 120 characters.'),
    timeZone: z.string().trim().refine(isTimeZone, 'Choose an IANA time zone such as Pacific/Auckland or Europe/London.'),
    locale: z
      .string()
      .max(35, 'Use a language tag such as en-NZ, en-GB or de-DE.')
      .transform((t, ctx) => {
        const tag = canonicalLocale(t);
        if (!tag) {
          ctx.addIssue({ code: 'custom', message: 'Use a language tag this server knows, such as en-NZ, en-GB or de-DE (language, then region).' });
          return z.NEVER;
        }
        return tag;
      })
      .optional(),
    currency: z
      .string()
      .trim()
      .toUpperCase()
      .refine((c) => /^[A-Z]{3}$/.test(c) && isCurrency(c), 'Use an ISO 4217 currency code such as NZD, EUR or USD.'),
    taxRatePercent: z
      .number({ error: 'Enter the tax rate as a number of percent, e.g. 15.' })
      .min(0, 'The tax rate cannot be negative.')
      .max(100, 'The tax rate is at most 100 %.')
      .refine((n) => Math.round(n * 1000) === n * 1000 || Math.abs(Math.round(n * 1000) - n * 1000) < 1e-6, 'Use at most three decimals.'),
    pricesIncludeTax: z.boolean({ error: 'Say whether prices include tax.' }),
    publicBaseUrl: z
      .string()
      .trim()
      .max(300, 'Use at most 300 characters.')
      .nullable()
      .transform((s, ctx) => {
        if (s === null || s === '') return null;
        const n = normaliseBaseUrl(s);
        if (!n) {
          ctx.addIssue({ code: 'custom', message: 'Enter an address such as https://laser.example.org (no query or #).' });
          return z.NEVER;
        }
        return n;
      }),
  })
  .strict();

export type SiteSettingsInput = z.input<typeof siteSettingsInput>;
export type SiteSettingsValues = z.output<typeof siteSettingsInput>;

/** What an admin edits on the Site screen; the settings read and the API answer are these plus when they changed. */
export interface SiteValues {
  name: string;
  timeZone: string;
  /** The site locale: a BCP 47 tag (en-NZ, de-DE) for every date, time, number and amount shown. */
  locale: string;
  currency: string;
  /** Percent, e.g. 15 for 15 % GST. */
  taxRatePercent: number;
  /** True: prices are entered and shown with tax included; false: tax is added on top. */
  pricesIncludeTax: boolean;
  /** The address printed on QR labels as set by an admin; null means the environment's PUBLIC_BASE_URL. */
  publicBaseUrl: string | null;
}

/** The fields an admin edits, in the order the audit lists them. */
export const SITE_FIELDS = ['name', 'timeZone', 'locale', 'currency', 'taxRatePercent', 'pricesIncludeTax', 'publicBaseUrl'] as const satisfies readonly (keyof SiteValues)[];

/** Just the editable values of a settings record (the form's initial values, the audit's before and after). */
export function siteValues(s: SiteValues): SiteValues {
  return { name: s.name, timeZone: s.timeZone, locale: s.locale, currency: s.currency, taxRatePercent: s.taxRatePercent, pricesIncludeTax: s.pricesIncludeTax, publicBaseUrl: s.publicBaseUrl };
}
