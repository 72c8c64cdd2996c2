/** Sign-in through the real Auth.js endpoint, the throttle (kept in PostgreSQL), sign-up and sign-out. */
import { afterAll, afterEach, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';
import { DEMO, DEMO_PASSWORD } from '../support/env';
import { confirmByDatabase } from '../support/people';
import { env } from '../../src/lib/server/env';

afterEach(clearSignInLimits);
afterAll(closeTestDb);

describe('sign-in', () => {
  it('a right password gives a session cookie that is HttpOnly and SameSite=Lax', async () => {
    const c = new Client();
    const csrf = await body(await c.get('/api/auth/csrf'));
    const form = new URLSearchParams({ csrfToken: csrf.csrfToken, email: DEMO.member, password: DEMO_PASSWORD, callbackUrl: '/' });
    const res = await c.fetch('/api/auth/callback/credentials', { method: 'POST', body: form, headers: { 'content-type': 'application/x-www-form-urlencoded' } });
    expect(res.status).toBe(302);
    const cookie = res.headers.getSetCookie().find((s) => s.startsWith('authjs.session-token='));
    expect(cookie).toBeDefined();
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
    expect((await c.get('/api/me')).status).toBe(200);
  });

  it('e-mail is matched without regard to case', async () => {
    const c = new Client();
    const r = await c.signInAs(DEMO.instructor.toUpperCase(), DEMO_PASSWORD);
    expect(r.location).not.toContain('error');
    expect((await body(await c.get('/api/me'))).roles).toEqual(['instructor']);
  });

  it('a wrong password and an unknown e-mail get the same answer', async () => {
    const wrong = await new Client().signInAs(DEMO.member, 'not-the-password');
    const unknown = await new Client().signInAs('nobody@tidewater.example', 'not-the-password');
    expect(wrong.location).toContain('error=CredentialsSignin');
    expect(new URL(wrong.location).search).toBe(new URL(unknown.location).search);
  });

  it('after the limit of failures for one e-mail from one address, even the right password is refused with the throttle code', async () => {
    const victim = DEMO.newbie;
    // SIGN_IN_PAIR_LIMIT: 5 by default, lower under npm test
    const limit = env().SIGN_IN_PAIR_LIMIT;
    for (let i = 0; i < limit; i++) {
      const r = await new Client().signInAs(victim, `wrong-${i}`);
      expect(r.location).toContain('code=credentials');
    }
    const r = await new Client().signInAs(victim, DEMO_PASSWORD);
    expect(r.location).toContain('code=throttled');
    // the counter is in PostgreSQL, where every app process sees it
    const row = await testDb()('sign_in_limits').where('key', 'like', `email:${victim}`).first();
    expect(row?.points).toBeGreaterThanOrEqual(limit);
    // the page shows a clear message for that code
    const page = await new Client().get('/signin?error=CredentialsSignin&code=throttled');
    expect(await page.text()).toContain('Too many failed sign-ins');
  });

  it('after 30 failures from one address, every e-mail from there is refused', async () => {
    for (let i = 0; i < 30; i++) await new Client().signInAs(`guess${i}@tidewater.example`, 'wrong-password');
    const r = await new Client().signInAs(DEMO.steward, DEMO_PASSWORD);
    expect(r.location).toContain('code=throttled');
  });

  it('a successful sign-in clears the e-mail counter', async () => {
    // failures short of the pair's limit (SIGN_IN_PAIR_LIMIT), so the right password is still let in
    for (let i = 0; i < env().SIGN_IN_PAIR_LIMIT - 1; i++) await new Client().signInAs(DEMO.student, 'wrong-password');
    expect((await new Client().signInAs(DEMO.student, DEMO_PASSWORD)).location).not.toContain('error');
    const row = await testDb()('sign_in_limits').where('key', `email:${DEMO.student}`).first();
    expect(row).toBeUndefined();
  });
});

describe('sign-up and sign-out', () => {
  it('a new person gets the member role only, signs in with their password, and can sign out', async () => {
    const c = new Client();
    await c.get('/signup');
    const email = `new-${Date.now()}@example.org`;
    const form = new URLSearchParams({ name: 'Ana Test', email, password: 'a long enough phrase' });
    const res = await c.fetch('/signup', { method: 'POST', body: form, headers: { 'content-type': 'application/x-www-form-urlencoded' } });
    expect(res.status).toBe(303);
    expect(res.headers.get('location')).toBe('/signup?sent=1');
    expect((await c.get('/api/me')).status).toBe(401);
    // the address must be confirmed first (the link itself: accounts.test.ts)
    expect((await c.signInAs(email, 'a long enough phrase')).location).toContain('code=unconfirmed');
    await confirmByDatabase(email);
    expect((await c.signInAs(email, 'a long enough phrase')).location).not.toContain('error');
    const me = await body(await c.get('/api/me'));
    expect(me).toMatchObject({ email, name: 'Ana Test', roles: ['member'] });
    const stored = await testDb()('people').where({ email }).first();
    expect(stored.password_hash).toMatch(/^\$argon2id\$/);

    const out = await c.fetch('/signout', { method: 'POST' });
    expect(out.status).toBe(303);
    expect((await c.get('/api/me')).status).toBe(401);
  });

  it('refuses a weak password with a message and stores nothing', async () => {
    const c = new Client();
    const email = `weak-${Date.now()}@example.org`;
    const form = new URLSearchParams({ name: 'Weak Pass', email, password: 'password1' });
    const res = await c.fetch('/signup', { method: 'POST', body: form, headers: { 'content-type': 'application/x-www-form-urlencoded' } });
    expect(res.status).toBe(422);
    expect(await res.text()).toMatch(/at least 10 characters/);
    expect(await testDb()('people').where({ email }).first()).toBeUndefined();
  });
});
