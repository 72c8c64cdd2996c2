/**
 * One date style per site: every screen that shows a date or a time formats it here, in the site's time zone
 * and locale (pure, Intl only). Dates always carry the full year and a written month ("3 Dec 2026"), so they
 * cannot be read as day/month or month/day, nor a two-digit year as a past century. A fuller locale module
 * will replace this one; keeping every format in this file makes that a change in one place.
 */

/** The locale used until sites choose their own. */
export const DEFAULT_SITE_LOCALE = 'en-NZ';

export interface SiteFormat {
  timeZone: string;
  locale?: string;
}

function fmt(s: SiteFormat, options: Intl.DateTimeFormatOptions): Intl.DateTimeFormat {
  return new Intl.DateTimeFormat(s.locale ?? DEFAULT_SITE_LOCALE, { timeZone: s.timeZone, ...options });
}

const asDate = (d: Date | string) => (typeof d === 'string' ? new Date(d) : d);

/** "3 Dec 2026" */
export function formatDate(d: Date | string, s: SiteFormat): string {
  return fmt(s, { day: 'numeric', month: 'short', year: 'numeric' }).format(asDate(d));
}

/** "Thu 3 Dec 2026" */
export function formatDayDate(d: Date | string, s: SiteFormat): string {
  return fmt(s, { weekday: 'short', day: 'numeric', month: 'short', year: 'numeric' }).format(asDate(d));
}

/** "14:05" (24-hour clock) */
export function formatTime(d: Date | string, s: SiteFormat): string {
  return fmt(s, { hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(asDate(d));
}

/** "3 Dec 2026, 14:05" */
export function formatDateTime(d: Date | string, s: SiteFormat): string {
  return `${formatDate(d, s)}, ${formatTime(d, s)}`;
}

/** "Thu 3 Dec" — for axis labels and lists where the year is shown once nearby. */
export function formatShortDay(d: Date | string, s: SiteFormat): string {
  return fmt(s, { weekday: 'short', day: 'numeric', month: 'short' }).format(asDate(d));
}

/** "3 Dec" from a plain calendar date "2026-12-03" (no zone shift: the date is already the site's day). */
export function formatIsoDay(isoDate: string, s: Pick<SiteFormat, 'locale'> = {}, withYear = false): string {
  const m = /^(\d{4})-(\d{2})-(\d{2})/.exec(isoDate);
  if (!m) return isoDate;
  const d = new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]), 12));
  return new Intl.DateTimeFormat(s.locale ?? DEFAULT_SITE_LOCALE, { timeZone: 'UTC', day: 'numeric', month: 'short', ...(withYear ? { year: 'numeric' } : {}) }).format(d);
}

/** "1 h 30 min", "45 min", "2 h" */
export function formatMinutes(minutes: number): string {
  const h = Math.floor(minutes / 60);
  const m = Math.round(minutes % 60);
  if (h && m) return `${h} h ${m} min`;
  return h ? `${h} h` : `${m} min`;
}
