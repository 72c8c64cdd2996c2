/** Site settings (one row): name, IANA time zone, currency. */
import { db } from './db';

export interface SiteSettings {
  name: string;
  timeZone: string;
  currency: string;
}

const FALLBACK: SiteSettings = { name: 'Beamwarden', timeZone: 'UTC', currency: 'NZD' };

export async function getSettings(): Promise<SiteSettings> {
  const row = await db()('site_settings').where({ id: 1 }).first('name', 'time_zone', 'currency');
  return row ? { name: row.name, timeZone: row.time_zone, currency: row.currency } : FALLBACK;
}
