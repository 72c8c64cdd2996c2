/** Site settings (one row): name, IANA time zone, currency, tax, public base URL. All SQL of this area. */
import { db, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { HttpError } from './errors';
import { env } from './env';
import { SITE_FIELDS, siteValues, type SiteSettingsValues, type SiteValues } from '../site-settings';

export interface SiteSettings extends SiteValues {
  updatedAt: Date | null;
}

const FALLBACK: SiteSettings = {
  name: 'Beamwarden',
  timeZone: 'UTC',
  currency: 'NZD',
  taxRatePercent: 0,
  pricesIncludeTax: true,
  publicBaseUrl: null,
  updatedAt: null,
};

const COLUMNS = ['name', 'time_zone', 'currency', 'tax_rate_percent', 'prices_include_tax', 'public_base_url', 'updated_at'] as const;

type Row = { name: string; time_zone: string; currency: string; tax_rate_percent: number | string; prices_include_tax: boolean; public_base_url: string | null; updated_at: Date };

function toSettings(row: Row): SiteSettings {
  return {
    name: row.name,
    timeZone: row.time_zone,
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
    const after: SiteValues = siteValues(input);
    const changed = SITE_FIELDS.filter((k) => !before || before[k] !== after[k]);
    if (changed.length === 0 && row) return toSettings(row);
    // amounts are integers of the currency's minor unit: once money has been charged, the currency stays
    if (before && changed.includes('currency') && (await trx('charges').whereNot('currency', after.currency).first('id'))) {
      throw new HttpError(409, 'currency_in_use', `Charges have been made in ${before.currency}; the site's currency cannot change any more (amounts are not converted).`, { currency: `Charges exist in ${before.currency}.` });
    }
    const values = {
      name: after.name,
      time_zone: after.timeZone,
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
