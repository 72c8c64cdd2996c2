/** Site settings (one row): name, IANA time zone, site locale, currency, tax, public base URL. All SQL of this area. */
import pg from 'pg';
import type { Socket } from 'node:net';
import type { Knex } from 'knex';
import { db, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { env } from './env';
import { log, onShutdown } from './log';
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

/*
 * The settings are kept in memory per process (they change a few times a year and are read by nearly every request).
 * Every write to site_settings sends NOTIFY site_settings in its transaction (a trigger, so writes made outside the
 * app count too); each process LISTENs on one connection of its own and drops its copy when a notice arrives. While
 * that connection is down (database restart), the copy is dropped and every call reads the row, as before the cache.
 */
let cached: SiteSettings | null = null;
/** Bumped on every notice, local save and listener up/down: a read that began before a bump is not kept. */
let generation = 0;
let listening = false;
let listener: pg.Client | null = null;
let listenerStarted = false;
let reconnectTimer: NodeJS.Timeout | null = null;
let reconnectDelayMs = 250;
let downLogged = false;
let stopped = false;
/** Transactions that wrote the settings themselves: they read the row, never a copy. */
const changedIn = new WeakSet<object>();

let noticeWaiters: (() => void)[] = [];

function forget(): void {
  cached = null;
  generation++;
}

/**
 * Resolves on the listener's next notice (at most `ms` later; at once when not listening). Made before a save's
 * commit and awaited after it: the save answers once its notice has gone round, so another process, signalled by
 * PostgreSQL at the same moment, has in practice dropped its copy before the admin's next request reaches it.
 */
function nextNotice(ms: number): () => Promise<void> {
  if (!listening) return () => Promise.resolve();
  const seen = new Promise<void>((resolve) => noticeWaiters.push(resolve));
  return () => Promise.race([seen, new Promise<void>((resolve) => setTimeout(resolve, ms).unref())]);
}

function scheduleReconnect(): void {
  if (stopped || reconnectTimer) return;
  reconnectTimer = setTimeout(() => {
    reconnectTimer = null;
    void listen();
  }, reconnectDelayMs);
  reconnectTimer.unref();
  reconnectDelayMs = Math.min(reconnectDelayMs * 2, 5_000);
}

function listenerDown(err?: unknown): void {
  listening = false;
  forget();
  const client = listener;
  listener = null;
  if (client) client.end().catch(() => undefined);
  if (!downLogged && !stopped) {
    downLogged = true;
    log.warn({ event: 'settings_cache', outcome: 'off', err }, 'site settings read from the database on every call until the change listener is back');
  }
  scheduleReconnect();
}

async function listen(): Promise<void> {
  if (stopped) return;
  const client = new pg.Client({ connectionString: env().DATABASE_URL, keepAlive: true });
  listener = client;
  client.on('error', (err) => {
    if (listener === client) listenerDown(err);
  });
  client.on('end', () => {
    if (listener === client) listenerDown();
  });
  client.on('notification', (n) => {
    if (n.channel !== 'site_settings') return;
    forget();
    const waiters = noticeWaiters;
    noticeWaiters = [];
    for (const w of waiters) w();
  });
  try {
    await client.connect();
    // the listener never keeps a process alive on its own (scripts, tests): the app's server does that
    (client as unknown as { connection?: { stream?: Socket } }).connection?.stream?.unref?.();
    await client.query('LISTEN site_settings');
    if (listener !== client || stopped) return;
    forget(); // anything read before the LISTEN may have missed a notice
    listening = true;
    reconnectDelayMs = 250;
    if (downLogged) log.info({ event: 'settings_cache', outcome: 'on' }, 'site settings change listener back');
    downLogged = false;
  } catch (err) {
    if (listener === client) listenerDown(err);
  }
}

function startListener(): void {
  if (listenerStarted) return;
  listenerStarted = true;
  onShutdown('site settings listener', async () => {
    stopped = true;
    listening = false;
    forget();
    if (reconnectTimer) clearTimeout(reconnectTimer);
    const client = listener;
    listener = null;
    if (client) await client.end().catch(() => undefined);
  });
  void listen();
}

async function readSettings(conn: Conn): Promise<SiteSettings> {
  const row = (await conn('site_settings').where({ id: 1 }).first(...COLUMNS)) as Row | undefined;
  return row ? toSettings(row) : FALLBACK;
}

/**
 * The site's settings: the process's copy while the change listener is up, else read (in `conn`, a caller's
 * transaction, when given). A transaction that saved the settings itself always reads its own row.
 */
export async function getSettings(conn: Conn = db()): Promise<SiteSettings> {
  startListener();
  if (changedIn.has(conn)) return readSettings(conn);
  if (listening && cached) return cached;
  const began = generation;
  const wasListening = listening;
  const settings = await readSettings(conn);
  // kept only when no change can have slipped past: listening throughout and no notice since the read began (the
  // app's transactions are all READ COMMITTED, so a read inside one sees every commit made before it started)
  if (wasListening && listening && generation === began) cached = settings;
  return settings;
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

/** An amount written the site's way ("$1,234.56" in en-NZ): for e-mails and audit summaries written on the server. */
export async function siteMoney(amountMinor: number, currency: string): Promise<string> {
  return siteFormat(await siteLocale(), 'UTC').money(amountMinor, currency);
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
  const noticed = nextNotice(1_000);
  try {
    const saved = await transaction(async (trx) => saveSettings(trx, actorId, input));
    if (saved.wrote) await noticed(); // a save that changed nothing wrote nothing and sends no notice
    return saved.settings;
  } finally {
    forget(); // this process sees its own save at once, without waiting for its notice
  }
}

async function saveSettings(trx: Knex.Transaction, actorId: string, input: SiteSettingsValues): Promise<{ settings: SiteSettings; wrote: boolean }> {
  {
    changedIn.add(trx);
    const row = (await trx('site_settings').where({ id: 1 }).forUpdate().first(...COLUMNS)) as Row | undefined;
    const before = row ? siteValues(toSettings(row)) : null;
    // left out of the input: the site keeps its locale
    const after: SiteValues = siteValues({ ...input, locale: input.locale ?? before?.locale ?? DEFAULT_LOCALE });
    const changed = SITE_FIELDS.filter((k) => !before || before[k] !== after[k]);
    if (changed.length === 0 && row) return { settings: toSettings(row), wrote: false };
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
    return { settings: toSettings(saved!), wrote: true };
  }
}
