/**
 * How a site shows dates, times, numbers and money: one module, driven by the site locale (a BCP 47 tag such as
 * en-NZ or de-DE) and the site's IANA time zone, used by pages, islands, e-mails and receipts alike. Pure (Intl
 * only), so islands format in the site's zone and locale, never the browser's.
 */
import { currencyExponent, formatMinor } from './pricing';

export const DEFAULT_LOCALE = 'en-NZ';

/** True when `tag` is a well-formed BCP 47 locale that Intl supports for dates and numbers. */
export function isLocale(tag: string): boolean {
  try {
    return Intl.DateTimeFormat.supportedLocalesOf([tag]).length === 1 && Intl.NumberFormat.supportedLocalesOf([tag]).length === 1;
  } catch {
    return false;
  }
}

const cache = new Map<string, Intl.DateTimeFormat | Intl.NumberFormat>();
function memo<T extends Intl.DateTimeFormat | Intl.NumberFormat>(key: string, make: () => T): T {
  let f = cache.get(key) as T | undefined;
  if (!f) {
    f = make();
    cache.set(key, f);
  }
  return f;
}

export interface SiteFormat {
  locale: string;
  timeZone: string;
  /** "3 Dec 2026" (en-NZ), "3. Dez. 2026" (de-DE): day, month and a four-digit year, never a two-digit year. */
  date(at: Date): string;
  /** "Thursday, 3 December 2026" */
  longDate(at: Date): string;
  /** "Thu 3 Dec" — for calendars and short lists within the year */
  shortDate(at: Date): string;
  /** "14:05" or "2:05 pm", as the locale writes times */
  time(at: Date): string;
  /** "3 Dec 2026, 14:05" */
  dateTime(at: Date): string;
  /** "Thu 3 Dec, 14:00–15:30" (one day) or "3 Dec 2026, 22:00 – 4 Dec 2026, 01:00" */
  range(from: Date, to: Date): string;
  /** "1,234.5" (en-NZ), "1.234,5" (de-DE) */
  number(n: number, maxFractionDigits?: number): string;
  /** "$1,234.56" (en-NZ, NZD), "1.234,56 €" (de-DE, EUR): the currency's own digits, from integer minor units */
  money(amountMinor: number, currency: string): string;
}

/** The formatting functions of a site, for its locale and time zone. */
export function siteFormat(locale: string, timeZone: string): SiteFormat {
  const loc = isLocale(locale) ? locale : DEFAULT_LOCALE;
  const dtf = (name: string, opts: Intl.DateTimeFormatOptions) => memo(`${loc}|${timeZone}|${name}`, () => new Intl.DateTimeFormat(loc, { timeZone, ...opts }));
  const dateF = dtf('date', { day: 'numeric', month: 'short', year: 'numeric' });
  const longF = dtf('long', { weekday: 'long', day: 'numeric', month: 'long', year: 'numeric' });
  const shortF = dtf('short', { weekday: 'short', day: 'numeric', month: 'short' });
  const timeF = dtf('time', { hour: 'numeric', minute: '2-digit' });
  const dateTimeF = dtf('dateTime', { day: 'numeric', month: 'short', year: 'numeric', hour: 'numeric', minute: '2-digit' });
  const sameDay = (a: Date, b: Date) => dtf('ymd', { year: 'numeric', month: '2-digit', day: '2-digit' }).format(a) === dtf('ymd', { year: 'numeric', month: '2-digit', day: '2-digit' }).format(b);
  return {
    locale: loc,
    timeZone,
    date: (at) => dateF.format(at),
    longDate: (at) => longF.format(at),
    shortDate: (at) => shortF.format(at),
    time: (at) => timeF.format(at),
    dateTime: (at) => dateTimeF.format(at),
    range: (from, to) => (sameDay(from, new Date(to.getTime() - 1)) ? `${shortF.format(from)}, ${timeF.format(from)}–${timeF.format(to)}` : `${dateTimeF.format(from)} – ${dateTimeF.format(to)}`),
    number: (n, maxFractionDigits = 2) => memo(`${loc}|n${maxFractionDigits}`, () => new Intl.NumberFormat(loc, { maximumFractionDigits: maxFractionDigits })).format(n),
    money: (amountMinor, currency) => {
      const code = currency.toUpperCase();
      const digits = currencyExponent(code);
      const nf = memo(`${loc}|${code}`, () => new Intl.NumberFormat(loc, { style: 'currency', currency: code, minimumFractionDigits: digits, maximumFractionDigits: digits }));
      // a decimal string, not a float: Intl formats "1234.56" exactly
      return nf.format(formatMinor(amountMinor, code).replace('−', '-') as unknown as number);
    },
  };
}
