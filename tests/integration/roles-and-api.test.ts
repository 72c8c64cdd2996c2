/** Role checks on the server, the error shape of every API answer, and role changes written to the audit log. */
import { afterAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { DEMO } from '../support/env';
import { newPerson } from '../support/people';

afterAll(closeTestDb);

describe('signed out', () => {
  it('GET /api/me answers 401 with the error shape', async () => {
    const res = await new Client().get('/api/me');
    expect(res.status).toBe(401);
    expect(res.headers.get('content-type')).toMatch(/application\/json/);
    const b = await body(res);
    expect(b.error.code).toBe('sign_in_required');
    expect(typeof b.error.message).toBe('string');
  });

  it('GET /api/machines answers 401', async () => {
    expect((await new Client().get('/api/machines')).status).toBe(401);
  });

  it('a page that needs sign-in redirects to /signin and back', async () => {
    const res = await new Client().get('/admin/people?q=x');
    expect(res.status).toBe(303);
    expect(res.headers.get('location')).toBe('/signin?callbackUrl=' + encodeURIComponent('/admin/people?q=x'));
  });

  it('an unknown page is the 404 page', async () => {
    const res = await new Client().get('/no-such-page');
    expect(res.status).toBe(404);
    expect(await res.text()).toContain('Not found');
  });
});

describe('members', () => {
  it('GET /api/me names the person and their roles', async () => {
    const c = await Client.as('member');
    const me = await body(await c.get('/api/me'));
    expect(me.email).toBe(DEMO.member);
    expect(me.roles).toEqual(['member']);
  });

  it('GET /api/machines lists the seeded lasers with the documented fields', async () => {
    const c = await Client.as('member');
    const machines = await body<any[]>(await c.get('/api/machines'));
    const a = machines.find((m) => m.code === 'laser-a');
    expect(a).toMatchObject({ name: 'Laser A', powerW: 60, tubeType: 'dc_glass', wavelengthUm: 10.6, status: 'in service' });
    expect(machines.find((m) => m.code === 'laser-b')).toMatchObject({ powerW: 40, tubeType: 'rf_metal' });
    expect(Object.keys(a).sort()).toEqual(['code', 'id', 'name', 'powerW', 'status', 'tubeType', 'wavelengthUm'].sort());
  });

  it('an admin API route answers a member with 403 JSON', async () => {
    const c = await Client.as('member');
    const res = await c.get('/api/people');
    expect(res.status).toBe(403);
    expect((await body(res)).error.code).toBe('forbidden');
  });

  it('an admin page shows a member the 403 page', async () => {
    const c = await Client.as('member');
    const res = await c.get('/admin/people');
    expect(res.status).toBe(403);
    expect(await res.text()).toContain('This screen is not for your role');
  });
});

describe('admins and the People screen', () => {
  it('lists people with search and paging', async () => {
    const c = await Client.as('admin');
    const all = await body(await c.get('/api/people?pageSize=2&page=1'));
    expect(all.total).toBeGreaterThanOrEqual(6);
    expect(all.rows).toHaveLength(2);
    const found = await body(await c.get('/api/people?q=steward%40tidewater'));
    expect(found.rows.map((r: any) => r.email)).toEqual([DEMO.steward]);
  });

  it('refuses bad query values with 422 and names the field', async () => {
    const c = await Client.as('admin');
    const res = await c.get('/api/people?pageSize=100000');
    expect(res.status).toBe(422);
    const b = await body(res);
    expect(b.error.code).toBe('invalid');
    expect(Object.keys(b.error.fields)).toContain('pageSize');
  });

  it('grants and removes a role; each change is in the audit log with before and after', async () => {
    // an admin and a member of this file's own: no other file's session or role check sees these changes
    const own = await newPerson('roles-admin', { roles: ['admin'] });
    const c = own.client;
    const made = await newPerson('roles-member');
    const person = (await body(await c.get(`/api/people?q=${encodeURIComponent(made.email)}`))).rows[0];
    expect(person.email).toBe(made.email);
    const res = await c.send('PUT', `/api/people/${person.id}/roles`, { roles: ['member', 'steward'] });
    expect(res.status).toBe(200);
    expect((await body(res)).roles).toEqual(['member', 'steward']);

    const row = await testDb()('audit_log').where({ subject_id: person.id, kind: 'role.changed' }).orderBy('id', 'desc').first();
    expect(row.before).toEqual({ roles: ['member'] });
    expect(row.after).toEqual({ roles: ['member', 'steward'] });
    expect(row.actor_id).toBe(own.id);

    // the new role takes effect at once, without signing in again
    const s = made.client;
    expect((await body(await s.get('/api/me'))).roles).toEqual(['member', 'steward']);

    expect((await c.send('PUT', `/api/people/${person.id}/roles`, { roles: ['member'] })).status).toBe(200);
    expect((await body(await s.get('/api/me'))).roles).toEqual(['member']);
  });

  it('answers bad role bodies with 4xx and changes nothing', async () => {
    const own = await newPerson('roles-admin', { roles: ['admin'] });
    const c = own.client;
    const made = await newPerson('roles-member');
    // every audit row these requests could write names this file's admin as the actor (other files write rows meanwhile)
    const rowsOf = () => testDb()('audit_log').where({ actor_id: own.id }).orWhere({ subject_id: made.id }).count({ n: '*' }).first();
    const before = await rowsOf();
    for (const bad of [{ roles: ['overlord'] }, { roles: 'admin' }, {}, { roles: ['member'], extra: 1 }]) {
      const res = await c.send('PUT', `/api/people/${made.id}/roles`, bad);
      expect(res.status).toBe(422);
    }
    const notJson = await c.fetch(`/api/people/${made.id}/roles`, { method: 'PUT', body: 'roles=admin', headers: { 'content-type': 'text/plain' } });
    expect(notJson.status).toBe(415);
    const broken = await c.fetch(`/api/people/${made.id}/roles`, { method: 'PUT', body: '{"roles": [', headers: { 'content-type': 'application/json' } });
    expect(broken.status).toBe(400);
    expect((await c.send('PUT', '/api/people/not-a-uuid/roles', { roles: ['member'] })).status).toBe(404);
    expect((await c.send('PUT', '/api/people/00000000-0000-4000-8000-000000000000/roles', { roles: ['member'] })).status).toBe(404);
    const after = await rowsOf();
    expect(after).toEqual(before);
    expect((await testDb()('role_grants').where({ person_id: made.id }).pluck('role')).sort()).toEqual(['member']);
  });

  it('an admin cannot remove their own admin role', async () => {
    const c = await Client.as('admin');
    const me = await body(await c.get('/api/me'));
    const res = await c.send('PUT', `/api/people/${me.id}/roles`, { roles: ['member'] });
    expect(res.status).toBe(409);
    expect((await body(res)).error.code).toBe('cannot_remove_own_admin');
  });

  it('a steward cannot change roles', async () => {
    const c = await Client.as('steward');
    const me = await body(await c.get('/api/me'));
    expect((await c.send('PUT', `/api/people/${me.id}/roles`, { roles: ['admin'] })).status).toBe(403);
  });

  it('refuses a cross-site form post (origin check)', async () => {
    const c = await Client.as('admin');
    const me = await body(await c.get('/api/me'));
    const res = await c.fetch(`/api/people/${me.id}/roles`, {
      method: 'PUT',
      body: 'x',
      headers: { origin: 'https://evil.example', 'content-type': 'application/x-www-form-urlencoded' },
    });
    expect(res.status).toBe(403);
  });
});
