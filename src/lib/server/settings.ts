/** Site settings (one row): name, IANA time zone, site locale, currency, tax, public base URL. All SQL of this area. */
import { db, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { env } from './env';
import { SITE_FIELDS, siteValues, type SiteSettingsValues, type SiteValues } from '@lib/site-settings';
import { DEFAULT_LOCALE, siteFormat, type SiteFormat } from '@lib/format';

export interface SiteSettings extends SiteValues {
  updatedAt: Date | null;
}

const FALLBACK: SiteSettings = {
  name: 'Beamwarden',
  timeZone: 'UTC',
  locale: DEFAULT_LOCALE,
  currency: 'NZD',
  taxRatePercent: 0,
  pricesIncludeTax: true,
  publicBaseUrl: null,
  updatedAt: null,
};

const COLUMNS = ['name', 'time_zone', 'locale', 'currency', 'tax_rate_percent', 'prices_include_tax', 'public_base_url', 'updated_at'] as const;

type Row = { name: string; time_zone: string; locale: string; currency: string; tax_rate_percent: number | string; prices_include_tax: boolean; public_base_url: string | null; updated_at: Date };

function toSettings(row: Row): SiteSettings {
  return {
    name: row.name,
    timeZone: row.time_zone,
    locale: row.locale,
    currency: row.currency,
    taxRatePercent: Number(row.tax_rate_percent),
    pricesIncludeTax: row.prices_include_tax,
    publicBaseUrl: row.public_base_url,
    updatedAt: row.updated_at,
  };
}

/** The site's settings, read in `conn` (a caller's transaction) when given: the one place they are built. */
export async function getSettings(conn: Conn = db()): Promise<SiteSettings> {
  const row = (await conn('site_settings').where({ id: 1 }).first(...COLUMNS)) as Row | undefined;
  return row ? toSettings(row) : FALLBACK;
}

/** What pages and islands need to show dates, times, numbers and money the site's way (islands get it as props). */
export interface SiteLook {
  locale: string;
  timeZone: string;
  currency: string;
}

export function siteLook(s: SiteSettings): SiteLook {
  return { locale: s.locale, timeZone: s.timeZone, currency: s.currency };
}

/**
 * The site locale alone, for server code that already has the zone at hand. Inside a transaction pass it, so the
 * read uses the transaction's connection (a second pool connection per transaction can starve the pool under load).
 */
export async function siteLocale(q?: Conn): Promise<string> {
  return (await getSettings(q)).locale;
}

let localeMemo: { at: number; value: Promise<string> } | null = null;
/** The site locale remembered for a few seconds (one read for a burst of e-mails), for code without a connection at hand. */
function recentLocale(): Promise<string> {
  if (!localeMemo || Date.now() - localeMemo.at > 5_000) {
    const value = siteLocale().catch((err) => {
      localeMemo = null;
      throw err;
    });
    localeMemo = { at: Date.now(), value };
  }
  return localeMemo.value;
}

/** An amount written the site's way ("$1,234.56" in en-NZ): for e-mails and audit summaries written on the server. */
export async function siteMoney(amountMinor: number, currency: string): Promise<string> {
  return siteFormat(await recentLocale(), 'UTC').money(amountMinor, currency);
}

/** The site's formatter (its locale and time zone), for server code that writes e-mails, receipts and summaries. */
export async function siteFormatter(): Promise<SiteFormat> {
  const s = await getSettings();
  return siteFormat(s.locale, s.timeZone);
}

/** The base of every public link (QR labels): the admin's setting, else PUBLIC_BASE_URL. No trailing slash. */
export async function publicBaseUrl(): Promise<string> {
  const s = await getSettings();
  return (s.publicBaseUrl ?? env().PUBLIC_BASE_URL).replace(/\/+$/, '');
}

/**
 * Saves the site settings (validated by siteSettingsInput). Audited as `site.updated` with the values
 * before and after; a save that changes nothing writes nothing.
 */
export async function updateSettings(actorId: string, input: SiteSettingsValues): Promise<SiteSettings> {
  return transaction(async (trx) => {
    const row = (await trx('site_settings').where({ id: 1 }).forUpdate().first(...COLUMNS)) as Row | undefined;
    const before = row ? siteValues(toSettings(row)) : null;
    // left out of the input: the site keeps its locale
    const after: SiteValues = siteValues({ ...input, locale: input.locale ?? before?.locale ?? DEFAULT_LOCALE });
    const changed = SITE_FIELDS.filter((k) => !before || before[k] !== after[k]);
    if (changed.length === 0 && row) return toSettings(row);
    // amounts are integers of the currency's minor unit: once money has been charged, the currency stays
    if (before && changed.includes('currency') && (await trx('charges').whereNot('currency', after.currency).first('id'))) {
      throw new DomainError('conflict', 'currency_in_use', `Charges have been made in ${before.currency}; the site's currency cannot change any more (amounts are not converted).`, { currency: `Charges exist in ${before.currency}.` });
    }
    const values = {
      name: after.name,
      time_zone: after.timeZone,
      locale: after.locale,
      currency: after.currency,
      tax_rate_percent: after.taxRatePercent,
      prices_include_tax: after.pricesIncludeTax,
      public_base_url: after.publicBaseUrl,
      updated_at: trx.fn.now(),
    };
    const [saved] = (await trx('site_settings')
      .insert({ id: 1, ...values })
      .onConflict('id')
      .merge()
      .returning([...COLUMNS])) as Row[];
    await recordAudit(trx, {
      actorId,
      kind: 'site.updated',
      subjectType: 'site',
      subjectId: '1',
      summary: `Site settings changed: ${changed.map((k) => `${k} ${JSON.stringify(before?.[k] ?? null)} → ${JSON.stringify(after[k])}`).join('; ')}`,
      before: before && Object.fromEntries(changed.map((k) => [k, before[k]])),
      after: Object.fromEntries(changed.map((k) => [k, after[k]])),
    });
    return toSettings(saved!);
  });
}
