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
  /** "Thu 3 Dec, 14:05" — within the year, where the weekday helps more than the year */
  dayTime(at: Date): string;
  /** "Thu 14:05" — within the coming week */
  weekdayTime(at: Date): string;
  /** "3 Dec 2026, 14:05 NZDT" — with the zone's name, for records read by someone elsewhere */
  dateTimeZone(at: Date): string;
  /** "3 Dec 2026" (or "3 Dec" without the year) from a plain calendar date "2026-12-03": no zone shift */
  day(isoDate: string, withYear?: boolean): string;
  /** "Dec 2026" from "2026-12" */
  month(isoMonth: string): string;
  /** "Thursday, 3 December 2026, 14:00–15:30" (one day) or two full dates and times: for e-mails */
  longRange(from: Date, to: Date): string;
  /** "Thu 3 Dec, 14:00–15:30" (one day) or "3 Dec 2026, 22:00 – 4 Dec 2026, 01:00" */
  range(from: Date, to: Date): string;
  /** "1,234.5" (en-NZ), "1.234,5" (de-DE) */
  number(n: number, maxFractionDigits?: number): string;
  /** "$160", "$16K" (en-NZ), "16.000 NZ$" (de-DE): whole units, short, for chart axes (not for amounts people pay) */
  moneyShort(amountMinor: number, currency: string): string;
  /** "12.5 %" (en-NZ), "12,5 %" (de-DE) from a share 0.125 */
  percent(share: number, maxFractionDigits?: number): string;
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
  // the locale's own short clock ("14:05" en-GB and de-DE, "2:05 pm" en-NZ): timeStyle keeps its leading zero and
  // 12/24-hour choice, which hour/minute options alone do not; dates and times are joined, not mixed in one pattern
  const timeF = dtf('time', { timeStyle: 'short' });
  const weekdayF = dtf('weekday', { weekday: 'short' });
  const zoneNameF = dtf('zoneName', { hour: 'numeric', timeZoneName: 'short' });
  const dateTimeF = { format: (at: Date) => `${dateF.format(at)}, ${timeF.format(at)}` };
  const dayTimeF = { format: (at: Date) => `${shortF.format(at)}, ${timeF.format(at)}` };
  const weekdayTimeF = { format: (at: Date) => `${weekdayF.format(at)} ${timeF.format(at)}` };
  const zoneF = { format: (at: Date) => `${dateTimeF.format(at)} ${zoneNameF.formatToParts(at).find((p) => p.type === 'timeZoneName')?.value ?? timeZone}` };
  // plain calendar dates are read at noon UTC and shown in UTC: the date itself is already the site's day
  const plain = (name: string, opts: Intl.DateTimeFormatOptions) => memo(`${loc}|UTC|${name}`, () => new Intl.DateTimeFormat(loc, { timeZone: 'UTC', ...opts }));
  const sameDay = (a: Date, b: Date) => dtf('ymd', { year: 'numeric', month: '2-digit', day: '2-digit' }).format(a) === dtf('ymd', { year: 'numeric', month: '2-digit', day: '2-digit' }).format(b);
  return {
    locale: loc,
    timeZone,
    date: (at) => dateF.format(at),
    longDate: (at) => longF.format(at),
    shortDate: (at) => shortF.format(at),
    time: (at) => timeF.format(at),
    dateTime: (at) => dateTimeF.format(at),
    dayTime: (at) => dayTimeF.format(at),
    weekdayTime: (at) => weekdayTimeF.format(at),
    dateTimeZone: (at) => zoneF.format(at),
    day: (isoDate, withYear = true) => {
      const m = /^(\d{4})-(\d{2})-(\d{2})/.exec(isoDate);
      if (!m) return isoDate;
      const d = new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]), 12));
      return plain(withYear ? 'dayY' : 'day', { day: 'numeric', month: 'short', ...(withYear ? { year: 'numeric' } : {}) }).format(d);
    },
    month: (isoMonth) => {
      const m = /^(\d{4})-(\d{2})/.exec(isoMonth);
      if (!m) return isoMonth;
      return plain('month', { month: 'short', year: 'numeric' }).format(new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, 15)));
    },
    range: (from, to) => (sameDay(from, new Date(to.getTime() - 1)) ? `${shortF.format(from)}, ${timeF.format(from)}–${timeF.format(to)}` : `${dateTimeF.format(from)} – ${dateTimeF.format(to)}`),
    longRange: (from, to) => (sameDay(from, new Date(to.getTime() - 1)) ? `${longF.format(from)}, ${timeF.format(from)}–${timeF.format(to)}` : `${longF.format(from)}, ${timeF.format(from)} – ${longF.format(to)}, ${timeF.format(to)}`),
    number: (n, maxFractionDigits = 2) => memo(`${loc}|n${maxFractionDigits}`, () => new Intl.NumberFormat(loc, { maximumFractionDigits: maxFractionDigits })).format(n),
    moneyShort: (amountMinor, currency) => {
      const code = currency.toUpperCase();
      const nf = memo(`${loc}|short|${code}`, () => new Intl.NumberFormat(loc, { style: 'currency', currency: code, notation: 'compact', minimumFractionDigits: 0, maximumFractionDigits: 1 }));
      return nf.format(amountMinor / 10 ** currencyExponent(code));
    },
    percent: (share, maxFractionDigits = 1) => memo(`${loc}|p${maxFractionDigits}`, () => new Intl.NumberFormat(loc, { style: 'percent', maximumFractionDigits: maxFractionDigits })).format(share),
    money: (amountMinor, currency) => {
      const code = currency.toUpperCase();
      const digits = currencyExponent(code);
      const nf = memo(`${loc}|${code}`, () => new Intl.NumberFormat(loc, { style: 'currency', currency: code, minimumFractionDigits: digits, maximumFractionDigits: digits }));
      // a decimal string, not a float: Intl formats "1234.56" exactly
      return nf.format(formatMinor(amountMinor, code).replace('−', '-') as unknown as number);
    },
  };
}

/** "1 h 30 min", "45 min", "2 h": durations in the units' international symbols, the same in every locale. */
export function formatMinutes(minutes: number): string {
  const h = Math.floor(minutes / 60);
  const m = Math.round(minutes % 60);
  if (h && m) return `${h} h ${m} min`;
  return h ? `${h} h` : `${m} min`;
}
