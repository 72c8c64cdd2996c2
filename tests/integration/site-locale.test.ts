/**
 * CHANGES SITE-WIDE SETTINGS: this file sets the site locale (through the Site API) and the site currency (written
 * directly: the seeded charges keep the API from changing it) while it runs, and puts both back in afterAll and in
 * each test's finally block. Files run one at a time on one shared app and database, so nothing else sees them.
 *
 * The site locale and money: the Site form refuses a tag Intl does not support (422, per field); a receipt, the
 * Reports screen, a CSV heading and an e-mail are written in a second locale (de-DE, en-GB, en-IN), with a
 * zero-decimal (JPY), a three-decimal (BHD) and an Indian-grouped (INR) currency. Expected strings are what CLDR
 * (through Node's Intl) writes; ISO 4217 exponents JPY 0, BHD 3 (REFERENCE.md › Money), INR 2 (from memory).
 * Own person, own machine, own charges on 15 July 2025 (a day no other file uses); all removed afterwards.
 */
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { iso, setTestRules, siteTime } from '../support/booking';
import { to, waitForMail, type Mail } from '../support/mail';
import { waitUntil } from '../support/wait';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { clearedNew } from '../support/people';
import { localToInstant } from '../../src/lib/availability';

const nbsp = (s: string) => s.replace(/[\u00a0\u202f]/g, ' ');
let admin: Client;
let original: { locale: string; currency: string; timeZone: string } & Record<string, unknown>;
let person: Awaited<ReturnType<typeof clearedNew>>;
let machine: TestMachine;
const chargeIds: Record<'JPY' | 'BHD' | 'INR', string> = { JPY: '', BHD: '', INR: '' };
const DAY = '2025-07-15';

async function setLocale(locale: string): Promise<void> {
  const { updatedAt: _u, ...rest } = original;
  const res = await admin.send('PUT', '/api/site', { ...rest, locale });
  expect(res.status, await res.clone().text()).toBe(200);
}

async function restore(): Promise<void> {
  const { updatedAt: _u, ...rest } = original;
  await testDb()('site_settings').where({ id: 1 }).update({ currency: original.currency });
  await admin.send('PUT', '/api/site', rest);
}

beforeAll(async () => {
  admin = await Client.as('admin');
  original = await body(await admin.get('/api/site'));
  machine = await createTestMachine(admin, 'locale');
  await setTestRules(admin, machine.id);
  person = await clearedNew('locale', [machine.code]);
  // one recharged charge per currency, charged at 14:00 on 15 July 2025 in the site zone
  const at = localToInstant(2025, 7, 15, 14 * 60, original.timeZone);
  const charge = (currency: string, amount: number) => ({
    person_id: person.id, tier: 'community', machine_id: machine.id, kind: 'no_show', method: 'recharge', cost_centre: 'LOCALE-1',
    state: 'recharged', currency, amount_minor: amount, tax_minor: 0, created_at: at, charged_at: at,
    breakdown: JSON.stringify({ lines: [{ kind: 'no_show', label: 'No-show fee', quantity: 1, unitMinor: amount, amountMinor: amount }], subtotalMinor: amount, taxMinor: 0, taxMode: 'inclusive', taxRateBp: 0, amountMinor: amount, beamTimeMinor: 0, billedMinutes: 0 }),
  });
  const rows = (await testDb()('charges').insert([charge('JPY', 123456), charge('BHD', 1234567), charge('INR', 12345678)]).returning(['id', 'currency'])) as { id: string; currency: keyof typeof chargeIds }[];
  for (const r of rows) chargeIds[r.currency] = r.id;
});

afterAll(async () => {
  try {
    await restore();
    expect((await body(await admin.get('/api/site'))).locale).toBe(original.locale);
  } finally {
    await testDb()('charges').where({ machine_id: machine.id }).delete();
    await retireTestMachine(admin, machine);
    await closeTestDb();
  }
});

describe('the site locale on the Site screen', () => {
  it('is read with the settings, saved in its canonical form, and refused per field when Intl does not support it', async () => {
    expect(original.locale).toBe('en-NZ'); // the demo's region
    try {
      const { updatedAt: _u, ...rest } = original;
      for (const bad of ['en_NZ', 'xx-YY', 'klingon', '', 'de-DE-x-' + 'a'.repeat(40)]) {
        const res = await admin.send('PUT', '/api/site', { ...rest, locale: bad });
        expect(res.status, bad).toBe(422);
        const e = (await body(res)).error;
        expect(e.fields.locale, bad).toMatch(/language tag/);
      }
      const ok = await admin.send('PUT', '/api/site', { ...rest, locale: 'de-de' });
      expect(ok.status).toBe(200);
      expect((await body(ok)).locale).toBe('de-DE');
      expect((await body(await admin.get('/api/site'))).locale).toBe('de-DE');
      // the Site screen shows the field with the saved value
      expect(await (await admin.get('/admin/site')).text()).toContain('Site locale');
    } finally {
      await restore();
    }
  });
});

describe('money and dates in a second locale', () => {
  it('a receipt writes JPY without decimals, BHD with three, INR with Indian grouping, and the date the locale’s way', async () => {
    try {
      await setLocale('en-GB');
      const jpy = nbsp(await (await admin.get(`/account/receipts/${chargeIds.JPY}`)).text());
      expect(jpy).toContain('JP¥123,456');
      expect(jpy).not.toContain('JPY 123456');
      expect(jpy).toContain('Tuesday, 15 July 2025, 14:00');
      expect(nbsp(await (await admin.get(`/account/receipts/${chargeIds.BHD}`)).text())).toContain('BHD 1,234.567');

      await setLocale('en-IN');
      expect(nbsp(await (await admin.get(`/account/receipts/${chargeIds.INR}`)).text())).toContain('₹1,23,456.78');

      await setLocale('de-DE');
      const de = nbsp(await (await admin.get(`/account/receipts/${chargeIds.JPY}`)).text());
      expect(de).toContain('123.456 ¥');
      expect(de).toContain('Dienstag, 15. Juli 2025, 14:00');
      expect(nbsp(await (await admin.get(`/account/receipts/${chargeIds.BHD}`)).text())).toContain('1.234,567 BHD');
      // the person's own view of the same receipt
      expect(nbsp(await (await person.client.get(`/account/receipts/${chargeIds.JPY}`)).text())).toContain('123.456 ¥');
    } finally {
      await restore();
    }
  });

  it('the Reports screen writes its period in the site locale, and the islands get the locale from the server', async () => {
    try {
      await setLocale('de-DE');
      const reports = nbsp(await (await admin.get(`/reports?from=${DAY}&to=${DAY}`)).text());
      expect(reports).toMatch(/Showing (<!-- -->)?\d{1,2}\. [A-Z][a-zä]{2,3}\. \d{4}/); // "Showing 3. Nov. 2026" (CLDR de)
      expect(reports).toContain('locale'); // the island's props carry the site locale
      expect(reports).toContain('de-DE');
      const account = nbsp(await (await person.client.get('/account')).text());
      expect(account).toContain('de-DE');
      expect(account).not.toMatch(/NZD \d/);
    } finally {
      await restore();
    }
  });

  it('a CSV keeps money in major units of the currency’s own exponent, the currency in the heading', async () => {
    try {
      for (const [currency, net] of [['JPY', '123456'], ['BHD', '1234.567']] as const) {
        await testDb()('site_settings').where({ id: 1 }).update({ currency });
        // written outside the app: the app drops its copy of the settings when the change's notice reaches it
        await waitUntil(`the app seeing currency ${currency}`, async () => (await body<{ currency: string }>(await admin.get('/api/site'))).currency === currency, { timeoutMs: 2_000, intervalMs: 20 });
        const res = await admin.get(`/api/reports/revenue.csv?from=${DAY}&to=${DAY}&machineId=${machine.id}`);
        expect(res.status).toBe(200);
        const text = await res.text();
        const parsed = Papa.parse<Record<string, string>>(text.replace(/^\uFEFF/, ''), { header: true, skipEmptyLines: true });
        expect(parsed.meta.fields).toContain(`net (${currency})`);
        const row = parsed.data.find((r) => r.machine === machine.name && Object.values(r).includes(net));
        expect(row, `${currency} row in ${text}`).toBeTruthy();
      }
    } finally {
      await restore();
    }
  });

  it('an e-mail is written in the site locale, with a neutral greeting', async () => {
    try {
      await setLocale('de-DE');
      const since = new Date();
      const startsAt = siteTime(6, 10);
      const res = await person.client.send('POST', '/api/bookings', { machineId: machine.id, startsAt: iso(startsAt), endsAt: iso(siteTime(6, 11)), materials: [], notes: '' });
      expect(res.status, await res.clone().text()).toBe(201);
      const mail: Mail = await waitForMail((m) => m.to.some((t) => t.address.toLowerCase() === person.email.toLowerCase()) && m.subject.startsWith('Booking confirmed'), { since });
      // "Booking confirmed: …, Donnerstag, 10. Dezember 2026, 10:00–11:00" (CLDR de: weekday, day. month year; 24-hour clock)
      expect(nbsp(mail.subject)).toMatch(/(Montag|Dienstag|Mittwoch|Donnerstag|Freitag|Samstag|Sonntag), \d{1,2}\. [A-ZÄÖÜ][a-zäöü]+ \d{4}, 10:00–11:00/);
      expect(mail.text).toContain(`Hello ${person.name},`);
      expect(mail.text).not.toContain('Kia ora');
    } finally {
      await restore();
    }
  });
});
