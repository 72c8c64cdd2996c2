/**
 * The admin console: the Audit screen's API and CSV, site settings, deactivating and reactivating
 * people — with the role checks of every new route.
 */
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body, freshLoopbackAddress } from '../support/client';
import { confirmByDatabase } from '../support/people';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';

let admin: Client;
let adminId: string;
let originalSite: any;

/** A new member, signed up through the real form; returns their signed-in client and id. */
async function newMember(name: string): Promise<{ client: Client; id: string; email: string; password: string }> {
  const client = new Client(undefined, freshLoopbackAddress());
  await client.get('/signup');
  const email = `p-${name.toLowerCase().replace(/[^a-z0-9]+/g, '-')}-${Date.now()}-${Math.floor(Math.random() * 1e6)}@example.org`;
  const password = 'a long enough phrase';
  const res = await client.fetch('/signup', { method: 'POST', body: new URLSearchParams({ name, email, password }), headers: { 'content-type': 'application/x-www-form-urlencoded' } });
  expect(res.status).toBe(303);
  await confirmByDatabase(email);
  // sign-up starts no session (it answers the same for taken addresses): sign in as the person would
  expect((await client.signInAs(email, password)).location).not.toContain('error');
  const me = await body(await client.get('/api/me'));
  return { client, id: me.id, email, password };
}

beforeAll(async () => {
  admin = await Client.as('admin');
  adminId = (await body(await admin.get('/api/me'))).id;
  originalSite = await body(await admin.get('/api/site'));
});

afterAll(async () => {
  // leave the shared test database's site settings as they were
  const { updatedAt: _u, ...restore } = originalSite;
  await admin.send('PUT', '/api/site', restore);
  await clearSignInLimits();
  await closeTestDb();
});

describe('role checks on every new route', () => {
  const routes: [string, string, unknown?][] = [
    ['GET', '/api/audit'],
    ['GET', '/api/audit.csv'],
    ['GET', '/api/audit/facets'],
    ['GET', '/api/site'],
    ['PUT', '/api/site', { name: 'x' }],
    ['POST', '/api/people/00000000-0000-4000-8000-000000000000/deactivate'],
    ['POST', '/api/people/00000000-0000-4000-8000-000000000000/reactivate'],
  ];
  for (const [method, path, json] of routes) {
    it(`${method} ${path}: 401 signed out, 403 for member, instructor and steward`, async () => {
      const out = await new Client().send(method, path, json);
      expect(out.status).toBe(401);
      expect((await body(out)).error.code).toBe('sign_in_required');
      for (const who of ['member', 'instructor', 'steward'] as const) {
        const res = await (await Client.as(who)).send(method, path, json);
        expect(res.status, who).toBe(403);
        expect((await body(res)).error.code).toBe('forbidden');
      }
    });
  }

  for (const page of ['/admin', '/admin/audit', '/admin/site']) {
    it(`${page}: signed out → sign-in; member → 403 page; admin → 200`, async () => {
      const out = await new Client().get(page);
      expect(out.status).toBe(303);
      expect(out.headers.get('location')).toBe(`/signin?callbackUrl=${encodeURIComponent(page)}`);
      expect((await (await Client.as('member')).get(page)).status).toBe(403);
      const ok = await admin.get(page);
      expect(ok.status).toBe(200);
      expect(await ok.text()).toContain('<h1');
    });
  }
});

describe('the audit log', () => {
  it('filters by actor and kind, pages, and sorts', async () => {
    const tag = `Audit Subject ${Date.now()}`;
    const m = await newMember(tag);
    // three role changes by the admin on this person
    for (const roles of [['member', 'steward'], ['member'], ['member', 'instructor']]) {
      expect((await admin.send('PUT', `/api/people/${m.id}/roles`, { roles })).status).toBe(200);
    }
    const byAdmin = await body(await admin.get(`/api/audit?actor=${adminId}&kind=role.changed&q=${encodeURIComponent(tag)}&pageSize=200`));
    const mine = byAdmin.rows.filter((r: any) => r.subjectId === m.id);
    expect(mine).toHaveLength(3);
    expect(byAdmin.rows.every((r: any) => r.actorId === adminId && r.kind === 'role.changed')).toBe(true);
    // newest first by default
    expect(mine[0].after).toEqual({ roles: ['member', 'instructor'] });
    expect(mine[2].before).toEqual({ roles: ['member'] });
    expect(mine[0].actorName).toBe('Aroha Ngata');

    // the person's own sign-up is theirs, not the admin's
    const own = await body(await admin.get(`/api/audit?actor=${m.id}`));
    expect(own.total).toBe(1);
    expect(own.rows[0]).toMatchObject({ kind: 'person.created', subjectId: m.id });

    // paging: pages of 1 walk the same rows in the same order
    const q = `actor=${adminId}&kind=role.changed&q=${encodeURIComponent(tag)}`;
    const all = await body(await admin.get(`/api/audit?${q}`));
    expect(all.total).toBe(3);
    const walked = [];
    for (let p = 1; p <= 3; p++) {
      const one = await body(await admin.get(`/api/audit?${q}&pageSize=1&page=${p}`));
      expect(one.total).toBe(3);
      expect(one.rows).toHaveLength(1);
      walked.push(one.rows[0].id);
    }
    expect(walked).toEqual(all.rows.map((r: any) => r.id));
    expect((await body(await admin.get(`/api/audit?${q}&pageSize=1&page=4`))).rows).toEqual([]);
    const oldestFirst = await body(await admin.get(`/api/audit?${q}&sort=at&dir=asc`));
    expect(oldestFirst.rows.map((r: any) => r.id)).toEqual([...walked].reverse());

    // the facets offer this kind and this actor
    const facets = await body(await admin.get('/api/audit/facets'));
    expect(facets.kinds).toContain('role.changed');
    expect(facets.actors.map((a: any) => a.id)).toContain(adminId);
  });

  it('reads from and to as whole days in the site time zone (Pacific/Auckland)', async () => {
    expect(originalSite.timeZone).toBe('Pacific/Auckland');
    // Rows at a chosen past instant cannot be made through the API, so these two are written directly.
    // 2026-06-30T11:59:59Z is 23:59:59 on 30 June in Auckland (NZST, UTC+12, IANA tz database);
    // 2026-06-30T12:00:00Z is 00:00 on 1 July there.
    const kind = `test.boundary_${Date.now()}`;
    await testDb()('audit_log').insert([
      { at: '2026-06-30T11:59:59Z', kind, subject_type: 'test', summary: 'last second of 30 June (Auckland)' },
      { at: '2026-06-30T12:00:00Z', kind, subject_type: 'test', summary: 'first second of 1 July (Auckland)' },
      // 2026-12-31T10:59:59Z is 23:59:59 on 31 December in Auckland (NZDT, UTC+13)
      { at: '2026-12-31T10:59:59Z', kind, subject_type: 'test', summary: 'last second of 31 December (Auckland)' },
    ]);
    const get = async (range: string) => (await body(await admin.get(`/api/audit?kind=${kind}&${range}`))).rows.map((r: any) => r.summary);
    expect(await get('from=2026-07-01')).toEqual(['last second of 31 December (Auckland)', 'first second of 1 July (Auckland)']);
    expect(await get('to=2026-06-30')).toEqual(['last second of 30 June (Auckland)']);
    expect(await get('from=2026-06-30&to=2026-06-30')).toEqual(['last second of 30 June (Auckland)']);
    expect(await get('from=2026-07-01&to=2026-07-01')).toEqual(['first second of 1 July (Auckland)']);
    expect(await get('from=2026-12-31&to=2026-12-31')).toEqual(['last second of 31 December (Auckland)']);
    // empty values mean "no filter", as an HTML form sends them
    expect(await get('from=&to=&actor=')).toHaveLength(3);
  });

  it('answers bad filters with 422 naming the field', async () => {
    for (const [query, field] of [
      ['from=2026-13-01', 'from'],
      ['to=2026-02-30', 'to'],
      ['from=yesterday', 'from'],
      ['actor=not-a-uuid', 'actor'],
      ['from=2026-07-02&to=2026-07-01', 'to'],
      ['pageSize=0', 'pageSize'],
      ['sort=summary', 'sort'],
      ['kind=role%20changed;drop', 'kind'],
    ] as const) {
      const res = await admin.get(`/api/audit?${query}`);
      expect(res.status, query).toBe(422);
      const b = await body(res);
      expect(b.error.code).toBe('invalid');
      expect(Object.keys(b.error.fields), query).toContain(field);
    }
    expect((await admin.get('/api/audit.csv?from=2026-13-01')).status).toBe(422);
  });

  it('exports the filtered rows as CSV that parses, in the site time zone, with formulas defused', async () => {
    const tag = `zq${Date.now()}`;
    const m = await newMember(`=HYPERLINK("http://x.invalid","click") ${tag}`);
    await admin.send('PUT', `/api/people/${m.id}/roles`, { roles: ['member', 'steward'] });
    const filter = `q=${tag}`;
    const json = await body(await admin.get(`/api/audit?${filter}&pageSize=200`));
    expect(json.total).toBe(2);

    const res = await admin.get(`/api/audit.csv?${filter}`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/csv/);
    expect(res.headers.get('content-disposition')).toMatch(/^attachment; filename="beamwarden-audit-\d{4}-\d{2}-\d{2}\.csv"$/);
    const parsed = Papa.parse<Record<string, string>>(await res.text(), { header: true, skipEmptyLines: true });
    expect(parsed.errors).toEqual([]);
    expect(parsed.meta.fields).toEqual(['time (Pacific/Auckland)', 'time (UTC)', 'actor', 'actor id', 'kind', 'subject type', 'subject id', 'summary', 'before', 'after']);
    expect(parsed.data).toHaveLength(json.total);
    expect(parsed.data.map((r) => r['time (UTC)'])).toEqual(json.rows.map((r: any) => r.at));
    expect(parsed.data.map((r) => r.kind)).toEqual(['role.changed', 'person.created']);
    const created = parsed.data[1]!;
    // the person's name starts with "=", so the cells that carry it start with an apostrophe
    expect(created.actor).toBe(`'=HYPERLINK("http://x.invalid","click") ${tag}`);
    expect(created.summary!.startsWith("'=HYPERLINK")).toBe(true);
    expect(JSON.parse(parsed.data[0]!.after!)).toEqual({ roles: ['member', 'steward'] });
    // the local time is the UTC time moved into Pacific/Auckland (UTC+12 or +13)
    const utc = new Date(created['time (UTC)']!);
    const local = new Date(`${created['time (Pacific/Auckland)']!.replace(' ', 'T')}Z`);
    expect([12, 13]).toContain((local.getTime() - Math.floor(utc.getTime() / 1000) * 1000) / 3_600_000);
  });

  it('the CSV of a long log comes out whole (more rows than one read batch)', async () => {
    const kind = `test.bulk_${Date.now()}`;
    const rows = Array.from({ length: 2345 }, (_, i) => ({ kind, subject_type: 'test', summary: `bulk row ${i}`, at: new Date(Date.UTC(2026, 0, 1, 0, 0, i)) }));
    for (let i = 0; i < rows.length; i += 500) await testDb()('audit_log').insert(rows.slice(i, i + 500));
    const text = await (await admin.get(`/api/audit.csv?kind=${kind}`)).text();
    const parsed = Papa.parse<Record<string, string>>(text, { header: true, skipEmptyLines: true });
    expect(parsed.data).toHaveLength(2345);
    expect(new Set(parsed.data.map((r) => r.summary)).size).toBe(2345);
    expect(parsed.data[0]!.summary).toBe('bulk row 2344');
  });

  it('is append-only: no route changes or removes a row, and the database refuses too', async () => {
    const before = await testDb()('audit_log').count({ n: '*' }).first();
    const newest = await testDb()('audit_log').orderBy('id', 'desc').first();
    for (const method of ['PUT', 'PATCH', 'DELETE', 'POST']) {
      for (const path of ['/api/audit', `/api/audit/${newest.id}`, '/api/audit.csv']) {
        const res = await admin.send(method, path, { summary: 'rewritten' });
        expect([404, 405], `${method} ${path}`).toContain(res.status);
      }
    }
    expect(await testDb()('audit_log').count({ n: '*' }).first()).toEqual(before);
    expect((await testDb()('audit_log').where({ id: newest.id }).first()).summary).toBe(newest.summary);
    // and the table itself refuses, whoever asks
    await expect(testDb()('audit_log').where({ id: newest.id }).update({ summary: 'rewritten' })).rejects.toThrow(/append-only/);
    await expect(testDb()('audit_log').where({ id: newest.id }).delete()).rejects.toThrow(/append-only/);
  });
});

describe('site settings', () => {
  it('reads the seeded settings', async () => {
    expect(originalSite).toMatchObject({ name: 'Tidewater Community Workshop', timeZone: 'Pacific/Auckland', currency: 'NZD', taxRatePercent: 15, pricesIncludeTax: true, publicBaseUrl: null });
  });

  it('saves a change, audits it with before and after, and writes nothing for a save that changes nothing', async () => {
    const next = { name: 'Tidewater Laser Room', timeZone: 'Pacific/Chatham', currency: 'nzd', taxRatePercent: 12.5, pricesIncludeTax: false, publicBaseUrl: 'https://laser.tidewater.example/' };
    const res = await admin.send('PUT', '/api/site', next);
    expect(res.status).toBe(200);
    const saved = await body(res);
    expect(saved).toMatchObject({ name: 'Tidewater Laser Room', timeZone: 'Pacific/Chatham', currency: 'NZD', taxRatePercent: 12.5, pricesIncludeTax: false, publicBaseUrl: 'https://laser.tidewater.example' });
    const row = await testDb()('audit_log').where({ kind: 'site.updated' }).orderBy('id', 'desc').first();
    expect(row.actor_id).toBe(adminId);
    expect(row.before).toMatchObject({ name: 'Tidewater Community Workshop', timeZone: 'Pacific/Auckland', taxRatePercent: 15, pricesIncludeTax: true, publicBaseUrl: null });
    expect(row.after).toMatchObject({ name: 'Tidewater Laser Room', timeZone: 'Pacific/Chatham', taxRatePercent: 12.5, pricesIncludeTax: false, publicBaseUrl: 'https://laser.tidewater.example' });
    expect(row.before).not.toHaveProperty('currency'); // unchanged fields are not listed

    const count = await testDb()('audit_log').where({ kind: 'site.updated' }).count({ n: '*' }).first();
    expect((await admin.send('PUT', '/api/site', next)).status).toBe(200);
    expect(await testDb()('audit_log').where({ kind: 'site.updated' }).count({ n: '*' }).first()).toEqual(count);

    // the header of every page shows the new name
    expect(await (await admin.get('/')).text()).toContain('Tidewater Laser Room');

    const { updatedAt: _u, ...restore } = originalSite;
    expect((await admin.send('PUT', '/api/site', restore)).status).toBe(200);
    expect(await body(await admin.get('/api/site'))).toMatchObject(restore);
  });

  it('the table itself refuses a malformed public address or tax rate', async () => {
    const trx = await testDb().transaction();
    try {
      await trx('site_settings').where({ id: 1 }).update({ public_base_url: 'https://laser.tidewater.example/lab' });
      for (const bad of [{ public_base_url: 'ftp://laser.example' }, { public_base_url: 'https://laser.example/?a=1' }, { public_base_url: 'https://a b' }, { tax_rate_percent: 100.5 }, { tax_rate_percent: -1 }]) {
        await expect(trx.raw('SAVEPOINT s').then(() => trx('site_settings').where({ id: 1 }).update(bad)), JSON.stringify(bad)).rejects.toThrow(/violates check constraint/);
        await trx.raw('ROLLBACK TO SAVEPOINT s');
      }
    } finally {
      await trx.rollback();
    }
  });

  it('refuses bad values with 422 per field and changes nothing', async () => {
    const { updatedAt: _u, ...good } = originalSite;
    const count = await testDb()('audit_log').where({ kind: 'site.updated' }).count({ n: '*' }).first();
    for (const [patch, field] of [
      [{ timeZone: 'Mars/Olympus_Mons' }, 'timeZone'],
      [{ timeZone: 'pacific/auckland ' }, 'timeZone'],
      [{ timeZone: '' }, 'timeZone'],
      [{ currency: 'XYZ' }, 'currency'],
      [{ currency: 'NZDollars' }, 'currency'],
      [{ taxRatePercent: -1 }, 'taxRatePercent'],
      [{ taxRatePercent: 101 }, 'taxRatePercent'],
      [{ taxRatePercent: 15.0001 }, 'taxRatePercent'],
      [{ taxRatePercent: '15' }, 'taxRatePercent'],
      [{ pricesIncludeTax: 'yes' }, 'pricesIncludeTax'],
      [{ publicBaseUrl: 'ftp://laser.example' }, 'publicBaseUrl'],
      [{ publicBaseUrl: 'https://laser.example/?a=1' }, 'publicBaseUrl'],
      [{ publicBaseUrl: 'javascript:alert(1)' }, 'publicBaseUrl'],
      [{ name: '   ' }, 'name'],
      [{ name: 'x'.repeat(121) }, 'name'],
      [{ extra: 1 }, '_'],
    ] as const) {
      const res = await admin.send('PUT', '/api/site', { ...good, ...patch });
      expect(res.status, JSON.stringify(patch)).toBe(422);
      const b = await body(res);
      expect(b.error.code).toBe('invalid');
      expect(Object.keys(b.error.fields), JSON.stringify(patch)).toContain(field);
    }
    const { name: _n, ...missingName } = good;
    expect((await admin.send('PUT', '/api/site', missingName)).status).toBe(422);
    expect(await testDb()('audit_log').where({ kind: 'site.updated' }).count({ n: '*' }).first()).toEqual(count);
    expect(await body(await admin.get('/api/site'))).toMatchObject(good);
  });
});

describe('deactivating a person', () => {
  it('ends their session at the next request, blocks sign-in, is audited, and reactivation lets them back', async () => {
    const m = await newMember('Dana Leaving');
    expect((await m.client.get('/api/me')).status).toBe(200);

    const res = await admin.send('POST', `/api/people/${m.id}/deactivate`);
    expect(res.status).toBe(200);
    expect(await body(res)).toMatchObject({ id: m.id, active: false });
    const stored = await testDb()('people').where({ id: m.id }).first();
    expect(stored.active).toBe(false);
    expect(stored.deactivated_at).toBeInstanceOf(Date);

    // the same cookie, the very next request: signed out
    expect((await m.client.get('/api/me')).status).toBe(401);
    const page = await m.client.get('/');
    expect(page.status).toBe(303);
    expect(page.headers.get('location')).toMatch(/^\/signin/);
    // and the right password no longer signs in
    const again = await new Client().signInAs(m.email, m.password);
    expect(again.location).toContain('error=CredentialsSignin');

    const row = await testDb()('audit_log').where({ kind: 'person.deactivated', subject_id: m.id }).first();
    expect(row).toMatchObject({ actor_id: adminId, before: { active: true }, after: { active: false } });
    // deactivating again changes nothing and writes nothing
    expect((await admin.send('POST', `/api/people/${m.id}/deactivate`)).status).toBe(200);
    expect(Number((await testDb()('audit_log').where({ kind: 'person.deactivated', subject_id: m.id }).count({ n: '*' }).first())?.n)).toBe(1);

    // the People list shows them as inactive
    const listed = (await body(await admin.get(`/api/people?q=${encodeURIComponent(m.email)}`))).rows[0];
    expect(listed.active).toBe(false);

    const back = await admin.send('POST', `/api/people/${m.id}/reactivate`);
    expect(back.status).toBe(200);
    expect(await body(back)).toMatchObject({ active: true });
    expect((await testDb()('people').where({ id: m.id }).first()).deactivated_at).toBeNull();
    expect(await testDb()('audit_log').where({ kind: 'person.reactivated', subject_id: m.id }).first()).toMatchObject({ actor_id: adminId });
    const signedIn = new Client();
    expect((await signedIn.signInAs(m.email, m.password)).location).not.toContain('error');
    expect((await signedIn.get('/api/me')).status).toBe(200);
  });

  it('an admin cannot deactivate themselves; unknown ids are 404', async () => {
    const res = await admin.send('POST', `/api/people/${adminId}/deactivate`);
    expect(res.status).toBe(409);
    expect((await body(res)).error.code).toBe('cannot_deactivate_self');
    expect((await admin.get('/api/me')).status).toBe(200);
    expect((await admin.send('POST', '/api/people/00000000-0000-4000-8000-000000000000/deactivate')).status).toBe(404);
    expect((await admin.send('POST', '/api/people/not-a-uuid/deactivate')).status).toBe(404);
    expect((await admin.send('POST', '/api/people/not-a-uuid/reactivate')).status).toBe(404);
  });

  it('a deactivated admin loses the admin API at once', async () => {
    const m = await newMember('Temp Admin');
    await admin.send('PUT', `/api/people/${m.id}/roles`, { roles: ['member', 'admin'] });
    expect((await m.client.get('/api/audit?pageSize=1')).status).toBe(200);
    await admin.send('POST', `/api/people/${m.id}/deactivate`);
    expect((await m.client.get('/api/audit?pageSize=1')).status).toBe(401);
  });
});
