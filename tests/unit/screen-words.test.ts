/** Plain words and one date style on the screens: the site's date format, audit words, the label address check. */
import { describe, expect, it } from 'vitest';
import { formatMinutes, siteFormat } from '../../src/lib/format';
import { AUDIT_KIND_WORDS, auditDetailLines, auditFieldWords, auditKindWords, withSiteDates } from '../../src/lib/audit-words';
import { isPublicAddress } from '../../src/lib/labels';

describe('one date style per site', () => {
  const site = siteFormat('en-NZ', 'Pacific/Auckland');
  const nbsp = (s: string) => s.replace(/[\u00a0\u202f]/g, ' ');
  it('writes the full year and the month as a word, in the site zone', () => {
    // 2026-06-18 13:00 UTC is 19 June 01:00 in Auckland (NZST, UTC+12); en-NZ writes a 12-hour clock (CLDR)
    expect(site.date(new Date('2026-06-18T13:00:00Z'))).toBe('19 Jun 2026');
    expect(nbsp(site.dateTime(new Date('2026-06-18T13:00:00Z')))).toBe('19 Jun 2026, 1:00 am');
    expect(site.date(new Date('1992-06-18T00:00:00Z'))).toContain('1992'); // never "92"
    expect(siteFormat('en-GB', 'Pacific/Auckland').dateTime(new Date('2026-06-18T13:00:00Z'))).toBe('19 Jun 2026, 01:00');
  });
  it('reads a calendar date without a zone shift, never as day-month digits', () => {
    expect(siteFormat('en-NZ', 'Pacific/Kiritimati').day('2026-11-06', false)).toBe('6 Nov');
    expect(siteFormat('en-NZ', 'Pacific/Pago_Pago').day('2026-11-06')).toBe('6 Nov 2026');
    expect(siteFormat('de-DE', 'Europe/Berlin').day('2026-11-06')).toBe('6. Nov. 2026');
    expect(siteFormat('en-NZ', 'UTC').month('2026-11')).toBe('Nov 2026');
  });
  it('says minutes as hours and minutes', () => {
    expect(formatMinutes(90)).toBe('1 h 30 min');
    expect(formatMinutes(240)).toBe('4 h');
    expect(formatMinutes(0)).toBe('0 min');
  });
});

describe('the audit screen in plain words', () => {
  it('has words for event codes, and makes unknown ones readable', () => {
    expect(auditKindWords('machine.status_changed')).toBe('Machine status changed');
    expect(auditKindWords('thing.got_done')).toBe('Thing: got done');
    for (const words of Object.values(AUDIT_KIND_WORDS)) expect(words).not.toMatch(/[._]/);
  });
  it('shows checklist keys as their checklist wording and booleans as yes/no', () => {
    expect(auditFieldWords('causeFixed')).toBe('The cause of the fault is fixed or made safe');
    expect(auditFieldWords('someNewKey')).toBe('Some new key');
    expect(auditDetailLines({ status: 'in service', checklist: { causeFixed: true, testFire: false } })).toEqual([
      { label: 'Status', value: 'in service' },
      { label: 'The cause of the fault is fixed or made safe', value: 'yes' },
      { label: 'A low-power test job ran attended, without trouble', value: 'no' },
    ]);
  });
});

describe('dates inside audit summaries', () => {
  it('shows ISO instants in the site date style and leaves other text alone', () => {
    const f = (d: Date) => siteFormat('en-GB', 'Pacific/Auckland').dateTime(d);
    expect(withSiteDates('New price version from 2027-03-02T11:00:00.000Z (NZD)', f)).toBe('New price version from 3 Mar 2027, 00:00 (NZD)');
    expect(withSiteDates('Booked Laser A', f)).toBe('Booked Laser A');
  });
});

describe('QR labels wait for a public address', () => {
  it('refuses loopback and unspecified hosts', () => {
    for (const u of ['http://127.0.0.1:4321', 'http://localhost:4321', 'http://[::1]:4321', 'http://0.0.0.0', 'http://app.localhost', null, '', 'not a url']) expect(isPublicAddress(u), String(u)).toBe(false);
  });
  it('accepts an address people can reach', () => {
    for (const u of ['https://laser.tidewater.example', 'http://192.168.1.20:4321']) expect(isPublicAddress(u), u).toBe(true);
  });
});
