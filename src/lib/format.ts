/**
 * How a site shows dates, times, numbers and money: one module, driven by the site locale (a BCP 47 tag such as
 * en-NZ or de-DE) and the site's IANA time zone, used by pages, islands, e-mails and receipts alike. Pure (Intl
 * only), so islands format in the site's zone and locale, never the browser's.
 */

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

// ---------------------------------------------------------------------------------------------
// Currency exponents and plain amounts (input fields, CSV cells): the one source of a currency's minor unit

const exponents = new Map<string, number>();

/**
 * Where the ISO 4217 exponent differs from the digits Intl shows by default (CLDR drops the minor unit of currencies
 * whose coins are out of use, but ISO 4217 — and card processors — keep it). From memory of ISO 4217 list one.
 */
const ISO_WHERE_INTL_DIFFERS: Readonly<Record<string, number>> = {
  AFN: 2, ALL: 2, COP: 2, HUF: 2, IDR: 2, IRR: 2, KPW: 2, LAK: 2, LBP: 2, MGA: 2, MMK: 2, PKR: 2, SLL: 2, SOS: 2, SYP: 2, YER: 2,
  IQD: 3,
};

const KNOWN = new Set(typeof Intl.supportedValuesOf === 'function' ? Intl.supportedValuesOf('currency') : []);

/**
 * The currency's minor-unit exponent (ISO 4217: NZD 2, JPY 0, BHD 3), from the platform's Intl currency data (with
 * the ISO corrections above), so every code the Site screen accepts (any code Intl knows) has one. RangeError for a
 * code Intl does not know.
 */
export function currencyExponent(currency: string): number {
  const code = currency.toUpperCase();
  let e = exponents.get(code);
  if (e === undefined) {
    if (!/^[A-Z]{3}$/.test(code) || !KNOWN.has(code)) throw new RangeError(`Unknown currency ${currency}: not an ISO 4217 code this runtime knows.`);
    e = ISO_WHERE_INTL_DIFFERS[code] ?? new Intl.NumberFormat('en', { style: 'currency', currency: code }).resolvedOptions().maximumFractionDigits ?? 2;
    exponents.set(code, e);
  }
  return e;
}

/** "12.34" for 1234 NZD, "1234" for 1234 JPY, "1.234" for 1234 BHD — string arithmetic, no floats. */
export function formatMinor(amountMinor: number, currency: string): string {
  const e = currencyExponent(currency);
  const neg = amountMinor < 0;
  const digits = String(Math.abs(amountMinor)).padStart(e + 1, '0');
  const body = e === 0 ? digits : `${digits.slice(0, -e)}.${digits.slice(-e)}`;
  return `${neg ? '−' : ''}${body}`;
}

/** "12.3" → 1230 (NZD); refuses more decimals than the currency has. Returns null when not a plain amount. */
export function parseMajor(text: string, currency: string): number | null {
  const e = currencyExponent(currency);
  const m = /^\s*(\d{1,12})(?:\.(\d*))?\s*$/.exec(text); // up to 10^12 major units stays a safe integer in minor units
  if (!m) return null;
  const frac = m[2] ?? '';
  if (frac.length > e) return null;
  return Number(m[1]) * 10 ** e + Number(frac.padEnd(e, '0') || '0');
}
