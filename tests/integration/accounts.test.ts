/**
 * Accounts a lab can run: password reset and change (sessions elsewhere end), e-mail confirmation before the
 * first sign-in, invitations, throttling without lock-outs, a person's own data and closing an account.
 */
import { afterAll, afterEach, describe, expect, it } from 'vitest';
import { encode } from '@auth/core/jwt';
import { unzipSync, strFromU8 } from 'fflate';
import { Client, body, freshLoopbackAddress } from '../support/client';
import { clearSignInLimits, closeTestDb, testDb } from '../support/db';
import { DEMO, DEMO_PASSWORD } from '../support/env';
import { createHash } from 'node:crypto';
import { confirmByDatabase, newPerson, signUpNew } from '../support/people';
import { env } from '../../src/lib/server/env';
import { inbox, to, type Mail, waitForMail } from '../support/mail';

afterEach(clearSignInLimits);
afterAll(closeTestDb);

const NEW_PASSWORD = 'a fresh passphrase for the laser room';
const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');

function linkToken(mail: Mail, path: string): string {
  const m = new RegExp(`${path}\\?token=([A-Za-z0-9_-]+)`).exec(mail.text ?? '');
  if (!m?.[1]) throw new Error(`no ${path} link in the e-mail: ${mail.text}`);
  return m[1];
}

async function signUpForm(c: Client, email: string, name = 'Rua Test', password = 'a long enough phrase') {
  return c.fetch('/signup', { method: 'POST', body: new URLSearchParams({ name, email, password }), headers: { 'content-type': 'application/x-www-form-urlencoded' } });
}

describe('password reset', () => {
  it('round trip through the mail fake: one use, old password refused, other sessions signed out, link expires', async () => {
    const p = await newPerson('reset');
    const other = new Client(undefined, freshLoopbackAddress());
    expect((await other.signInAs(p.email, p.password)).location).not.toContain('error');
    expect((await p.client.get('/api/me')).status).toBe(200);

    // the same answer for an address with an account and one without
    const asker = new Client(undefined, freshLoopbackAddress());
    const known = await asker.send('POST', '/api/account/password-reset', { email: p.email.toUpperCase() });
    const unknown = await asker.send('POST', '/api/account/password-reset', { email: `nobody-${Date.now()}@tidewater.example` });
    expect(known.status).toBe(202);
    expect(unknown.status).toBe(202);
    expect(await body(known)).toEqual(await body(unknown));

    const mail = await waitForMail((m) => to(p.email)(m) && /reset your password/.test(m.subject));
    const token = linkToken(mail, '/reset-password');
    expect(mail.text).toContain('30 minutes');
    // stored hashed: the token itself is nowhere in the database
    const stored = await testDb()('account_tokens').where({ purpose: 'reset' }).pluck('token_hash');
    expect(stored).not.toContain(token);

    const page = await new Client().get(`/reset-password?token=${token}`);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain(p.email);

    const weak = await asker.send('POST', '/api/account/password-reset/confirm', { token, password: 'short' });
    expect(weak.status).toBe(422);
    expect((await body(weak)).error.fields.password).toMatch(/at least 10/);

    const done = await asker.send('POST', '/api/account/password-reset/confirm', { token, password: NEW_PASSWORD });
    expect(done.status).toBe(200);
    // the link lets the person in at once
    expect((await body(await asker.get('/api/me'))).email).toBe(p.email);
    // both earlier sessions have ended
    expect((await p.client.get('/api/me')).status).toBe(401);
    expect((await other.get('/api/me')).status).toBe(401);
    // the link works once
    const again = await asker.send('POST', '/api/account/password-reset/confirm', { token, password: 'yet another long passphrase' });
    expect(again.status).toBe(410);
    expect((await body(again)).error.code).toBe('token_used');
    // old password refused, new one accepted
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(p.email, p.password)).location).toContain('error');
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(p.email, NEW_PASSWORD)).location).not.toContain('error');

    // a second link, aged past its 30 minutes, is refused as expired
    await asker.send('POST', '/api/account/password-reset', { email: p.email });
    const second = await waitForMail((m) => to(p.email)(m) && /reset your password/.test(m.subject) && m.id !== mail.id);
    const token2 = linkToken(second, '/reset-password');
    const person = await testDb()('people').where({ email: p.email }).first('id');
    await testDb()('account_tokens').where({ person_id: person.id, purpose: 'reset' }).whereNull('used_at').update({ expires_at: new Date(Date.now() - 60_000) });
    const late = await asker.send('POST', '/api/account/password-reset/confirm', { token: token2, password: 'yet another long passphrase' });
    expect(late.status).toBe(410);
    expect((await body(late)).error.code).toBe('token_expired');

    // audited, without secrets
    const audit = await testDb()('audit_log').where({ subject_id: person.id }).whereIn('kind', ['password.reset_requested', 'password.reset']);
    expect(audit.map((a) => a.kind)).toEqual(expect.arrayContaining(['password.reset_requested', 'password.reset']));
    const text = JSON.stringify(audit);
    for (const secret of [token, token2, NEW_PASSWORD, p.password]) expect(text).not.toContain(secret);
  });

  it('reset requests are limited per address: 429 too_many_requests with Retry-After', async () => {
    const c = new Client(undefined, freshLoopbackAddress());
    const email = `limit-${Date.now()}@tidewater.example`;
    const codes: number[] = [];
    let last: Response | undefined;
    for (let i = 0; i < 7; i++) {
      last = await c.send('POST', '/api/account/password-reset', { email });
      codes.push(last.status);
    }
    expect(codes.slice(0, 5)).toEqual([202, 202, 202, 202, 202]);
    expect(codes.slice(5)).toEqual([429, 429]);
    expect((await body(last!)).error.code).toBe('too_many_requests');
    expect(Number(last!.headers.get('retry-after'))).toBeGreaterThan(0);
  });
});

describe('change password', () => {
  it('asks for the current password; the other sessions end, this one goes on; audited without secrets', async () => {
    const p = await newPerson('change');
    const other = await new Client(undefined, freshLoopbackAddress()).useSessionOf(p.email);
    const wrong = await p.client.send('POST', '/api/account/password', { current: 'not it at all', password: NEW_PASSWORD });
    expect(wrong.status).toBe(403);
    expect((await body(wrong)).error.code).toBe('wrong_password');
    const ok = await p.client.send('POST', '/api/account/password', { current: p.password, password: NEW_PASSWORD });
    expect(ok.status).toBe(200);
    expect((await p.client.get('/api/me')).status).toBe(200);
    expect((await other.get('/api/me')).status).toBe(401);
    const row = await testDb()('audit_log').where({ kind: 'password.changed' }).whereRaw('subject_id = (select id::text from people where email = ?)', [p.email]).first();
    expect(row).toBeDefined();
    expect(JSON.stringify(row)).not.toContain(NEW_PASSWORD);
  });
});

describe('sign-up with e-mail confirmation', () => {
  it('an existing address gets the same answer as a new one; the new one must confirm before signing in', async () => {
    const c = new Client(undefined, freshLoopbackAddress());
    const fresh = `confirm-${Date.now()}@tidewater.example`;
    const a = await signUpForm(c, fresh);
    const b = await signUpForm(c, DEMO.steward);
    expect(a.status).toBe(303);
    expect([b.status, b.headers.get('location')]).toEqual([a.status, a.headers.get('location')]);
    await waitForMail((m) => to(DEMO.steward)(m) && /already have an account/.test(m.subject));

    const before = await new Client(undefined, freshLoopbackAddress()).signInAs(fresh, 'a long enough phrase');
    expect(before.location).toContain('code=unconfirmed');
    const mail = await waitForMail((m) => to(fresh)(m) && /confirm your e-mail address/.test(m.subject));
    const token = linkToken(mail, '/confirm-email');
    // opening the link does not confirm by itself (mail scanners follow links); the button does
    expect((await c.get(`/confirm-email?token=${token}`)).status).toBe(200);
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(fresh, 'a long enough phrase')).location).toContain('code=unconfirmed');
    const confirmed = await c.fetch(`/confirm-email?token=${token}`, { method: 'POST', body: new URLSearchParams({}), headers: { 'content-type': 'application/x-www-form-urlencoded' } });
    expect(confirmed.status).toBe(303);
    expect(confirmed.headers.get('location')).toBe('/signin?confirmed=1');
    const after = new Client(undefined, freshLoopbackAddress());
    expect((await after.signInAs(fresh, 'a long enough phrase')).location).not.toContain('error');
    expect((await body(await after.get('/api/me'))).roles).toEqual(['member']);
  });

  it('an unconfirmed account cannot book: no session counts for it', async () => {
    const c = new Client(undefined, freshLoopbackAddress());
    const email = `unconfirmed-${Date.now()}@tidewater.example`;
    expect((await signUpForm(c, email)).status).toBe(303);
    const person = await testDb()('people').where({ email }).first('id', 'name', 'email_confirmed_at');
    expect(person.email_confirmed_at).toBeNull();
    // even holding a session token signed with the app's own secret (as if one had been issued), it gets nowhere
    const token = await encode({ token: { sub: person.id, name: person.name, email, roles: ['member'], epoch: 0 }, secret: process.env.AUTH_SECRET!, salt: 'authjs.session-token', maxAge: 3600 });
    const forged = await fetch(new URL('/api/bookings', process.env.APP_URL), {
      method: 'POST',
      headers: { cookie: `authjs.session-token=${token}`, 'content-type': 'application/json', origin: process.env.APP_URL! },
      body: JSON.stringify({ machineId: '00000000-0000-4000-8000-000000000000', startsAt: new Date(Date.now() + 86_400_000).toISOString(), minutes: 60, materials: [] }),
    });
    expect(forged.status).toBe(401);
    expect(await testDb()('bookings').where({ person_id: person.id }).pluck('id')).toEqual([]);
    // the same token works once the address is confirmed: the refusal above was the confirmation, not the token
    await testDb()('people').where({ id: person.id }).update({ email_confirmed_at: new Date() });
    const me = await fetch(new URL('/api/me', process.env.APP_URL), { headers: { cookie: `authjs.session-token=${token}` } });
    expect(me.status).toBe(200);
  });

  it('rapid sign-ups from one client address past its limit → 429 too_many_requests with Retry-After', async () => {
    // the limit this run's app has (SIGN_UP_LIMIT_PER_ADDRESS: 20 by default, lower under npm test)
    const limit = env().SIGN_UP_LIMIT_PER_ADDRESS;
    const c = new Client(undefined, freshLoopbackAddress());
    const stamp = Date.now();
    const statuses: number[] = [];
    let refused: Response | undefined;
    for (let i = 0; i < limit + 3; i++) {
      const res = await signUpForm(c, `rapid-${stamp}-${i}@example.org`);
      statuses.push(res.status);
      if (res.status === 429) refused = res;
    }
    expect(statuses.slice(0, limit)).toEqual(Array(limit).fill(303));
    expect(statuses.slice(limit)).toEqual(Array(3).fill(429));
    expect(Number(refused!.headers.get('retry-after'))).toBeGreaterThan(0);
    expect(await refused!.text()).toContain('Too many sign-ups');
    // nothing was created for the refused ones
    expect(await testDb()('people').where('email', 'like', `rapid-${stamp}-%`).pluck('id')).toHaveLength(limit);
  });

  it('confirmation resends are limited too', async () => {
    const c = new Client(undefined, freshLoopbackAddress());
    const email = `resend-${Date.now()}@tidewater.example`;
    const codes: number[] = [];
    for (let i = 0; i < 6; i++) codes.push((await c.send('POST', '/api/account/confirmation', { email })).status);
    expect(codes).toEqual([202, 202, 202, 202, 202, 429]);
  });
});

describe('throttling without lock-outs', () => {
  it('wrong passwords up to the limit from one client address do not stop the right password from another', async () => {
    const p = await newPerson('lockout');
    // as by default (5 < 10): the pair closes before the e-mail's own growing wait would begin
    expect(env().SIGN_IN_PAIR_LIMIT).toBeLessThan(env().SIGN_IN_FREE_FAILURES);
    const attacker = freshLoopbackAddress();
    // SIGN_IN_PAIR_LIMIT: 5 by default, lower under npm test
    for (let i = 0; i < env().SIGN_IN_PAIR_LIMIT; i++) {
      expect((await new Client(undefined, attacker).signInAs(p.email, `wrong-${i}`)).location).toContain('code=credentials');
    }
    // that pair is now closed, even for the right password…
    expect((await new Client(undefined, attacker).signInAs(p.email, p.password)).location).toContain('code=throttled');
    // …but the person, elsewhere, signs in
    const real = new Client(undefined, freshLoopbackAddress());
    expect((await real.signInAs(p.email, p.password)).location).not.toContain('error');
    expect((await body(await real.get('/api/me'))).email).toBe(p.email);
  });

  it('many failures from many addresses only slow the e-mail down, and a reset link lets the person in at once', async () => {
    const p = await newPerson('slowdown');
    // SIGN_IN_FREE_FAILURES (10 by default, lower under npm test) from as many addresses, then one more
    const free = env().SIGN_IN_FREE_FAILURES;
    for (let i = 0; i < free + 1; i++) await new Client(undefined, freshLoopbackAddress()).signInAs(p.email, `wrong-${i}`);
    const wait = await testDb()('sign_in_limits').where({ key: `email-wait:${p.email}` }).first();
    expect(wait).toBeDefined();
    const waitS = (Number(wait.expire) - Date.now()) / 1000;
    expect(waitS).toBeGreaterThan(0);
    expect(waitS).toBeLessThanOrEqual(4); // 2 s after the last free failure, 4 s after the next: a delay, not a 15-minute block
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(p.email, p.password)).location).toContain('code=throttled');
    // the reset link proves control of the address: in at once, counters cleared
    const c = new Client(undefined, freshLoopbackAddress());
    await c.send('POST', '/api/account/password-reset', { email: p.email });
    const mail = await waitForMail((m) => to(p.email)(m) && /reset your password/.test(m.subject));
    expect((await c.send('POST', '/api/account/password-reset/confirm', { token: linkToken(mail, '/reset-password'), password: NEW_PASSWORD })).status).toBe(200);
    expect((await c.get('/api/me')).status).toBe(200);
    const left = await testDb()('sign_in_limits').where('key', 'like', `%${p.email}%`).pluck('key');
    expect(left.filter((k: string) => /^(email|email-wait|pair):/.test(k))).toEqual([]);
  });

  it('a forged X-Forwarded-For does not give a fresh client address', async () => {
    const p = await newPerson('forwarded');
    const pairLimit = env().SIGN_IN_PAIR_LIMIT;
    for (let i = 0; i < pairLimit; i++) {
      await new Client().fetch('/api/auth/csrf'); // warm
      const c = new Client();
      const csrf = (await body(await c.get('/api/auth/csrf'))).csrfToken;
      await c.fetch('/api/auth/callback/credentials', {
        method: 'POST',
        body: new URLSearchParams({ csrfToken: csrf, email: p.email, password: `wrong-${i}`, callbackUrl: '/' }),
        headers: { 'content-type': 'application/x-www-form-urlencoded', 'x-forwarded-for': `10.0.0.${i}` },
      });
    }
    // the server wrapper drops forwarded headers from anyone but a proxy in TRUST_PROXY: all of them count against
    // the one real (loopback) address the requests came from
    const rows = await testDb()('sign_in_limits').where('key', 'like', `pair:${p.email}|%`).select('key', 'points');
    expect(rows).toHaveLength(1);
    expect(rows[0]).toMatchObject({ points: pairLimit });
    expect(rows[0].key).toMatch(new RegExp(`^pair:${p.email.replace(/[.+]/g, '\\$&')}\\|127\\.`));
  });
});

describe('invitations', () => {
  it('an admin adds a person, who sets their own password from the e-mailed link', async () => {
    const admin = await Client.as('admin');
    const email = `invited-${Date.now()}@tidewater.example`;
    const res = await admin.send('POST', '/api/people', { name: 'Hana Invited', email, roles: ['instructor'] });
    expect(res.status).toBe(201);
    expect((await body(res)).roles).toEqual(['instructor']);
    expect((await admin.send('POST', '/api/people', { name: 'Again', email })).status).toBe(409);
    const mail = await waitForMail((m) => to(email)(m) && /invited/.test(m.subject));
    const c = new Client(undefined, freshLoopbackAddress());
    expect((await c.send('POST', '/api/account/password-reset/confirm', { token: linkToken(mail, '/reset-password'), password: NEW_PASSWORD })).status).toBe(200);
    expect((await body(await c.get('/api/me'))).roles).toEqual(['instructor']);
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(email, NEW_PASSWORD)).location).not.toContain('error');
  });

  it('an invitation can set the pricing tier; an unknown tier is refused at that field', async () => {
    const admin = await Client.as('admin');
    const email = `invited-tier-${Date.now()}@example.org`;
    const bad = await admin.send('POST', '/api/people', { name: 'Tama Tier', email, roles: ['member'], tier: 'gold' });
    expect(bad.status).toBe(422);
    expect(Object.keys((await body(bad)).error.fields)).toEqual(['tier']);
    const res = await admin.send('POST', '/api/people', { name: 'Tama Tier', email, roles: ['member'], tier: 'staff' });
    expect(res.status).toBe(201);
    expect(await body(res)).toMatchObject({ email, tier: 'staff', roles: ['member'] });
  });
});

describe('sending a new invitation', () => {
  it('a person who has not chosen a password gets a new link; the old one stops working; throttled; audited; refused once the password is set', async () => {
    const admin = await Client.as('admin');
    const email = `reinvited-${Date.now()}@tidewater.example`;
    const made = await body(await admin.send('POST', '/api/people', { name: 'Wiremu Reinvited', email, roles: ['member'] }));
    const first = await waitForMail((m) => to(email)(m) && /invited/.test(m.subject));
    const oldToken = linkToken(first, '/reset-password');

    // the People list says who is still to choose a password
    const listed = await body(await admin.get(`/api/people?q=${encodeURIComponent(email)}`));
    expect(listed.rows).toEqual([expect.objectContaining({ id: made.id, awaitingInvitation: true })]);

    const res = await admin.send('POST', `/api/people/${made.id}/invitation`);
    expect(res.status, await res.clone().text()).toBe(200);
    expect(await body(res)).toEqual({ email, name: 'Wiremu Reinvited', expiresInDays: 7 });
    const second = await waitForMail((m) => to(email)(m) && /new invitation/i.test(m.subject));
    expect(second.text).toContain('no longer works');
    const newToken = linkToken(second, '/reset-password');
    expect(newToken).not.toBe(oldToken);

    // the earlier link no longer works; the page says so rather than "already used"
    const c = new Client(undefined, freshLoopbackAddress());
    const old = await c.send('POST', '/api/account/password-reset/confirm', { token: oldToken, password: NEW_PASSWORD });
    expect(old.status).toBe(404);
    expect((await body(old)).error.code).toBe('token_unknown');

    const audit = await testDb()('audit_log').where({ kind: 'person.invitation_resent', subject_id: made.id }).select('actor_id', 'summary');
    expect(audit).toHaveLength(1);
    expect(audit[0]!.summary).toContain(email);

    // throttled: 3 an hour to one person (request-limits.ts); the 4th answers 429 with Retry-After, and sends nothing
    expect((await admin.send('POST', `/api/people/${made.id}/invitation`)).status).toBe(200);
    expect((await admin.send('POST', `/api/people/${made.id}/invitation`)).status).toBe(200);
    const limited = await admin.send('POST', `/api/people/${made.id}/invitation`);
    expect(limited.status).toBe(429);
    expect(Number(limited.headers.get('retry-after'))).toBeGreaterThan(0);
    expect(await testDb()('audit_log').where({ kind: 'person.invitation_resent', subject_id: made.id }).count({ n: '*' }).first()).toEqual({ n: 3 });
    await clearSignInLimits();

    // the newest link sets the password; from then on there is nothing to resend
    const live = (await testDb()('account_tokens').where({ person_id: made.id, purpose: 'invite' }).whereNull('used_at').pluck('token_hash')) as string[];
    expect(live).toHaveLength(1);
    await waitForMail((m) => to(email)(m) && /new invitation/i.test(m.subject) && live.includes(sha256(linkToken(m, '/reset-password'))));
    const newest = (await inbox()).find((m) => to(email)(m) && /new invitation/i.test(m.subject) && live.includes(sha256(linkToken(m, '/reset-password'))))!;
    expect((await c.send('POST', '/api/account/password-reset/confirm', { token: linkToken(newest, '/reset-password'), password: NEW_PASSWORD })).status).toBe(200);
    const after = await admin.send('POST', `/api/people/${made.id}/invitation`);
    expect(after.status).toBe(409);
    expect((await body(after)).error.code).toBe('not_awaiting_invitation');
    expect((await body(await admin.get(`/api/people?q=${encodeURIComponent(email)}`))).rows[0].awaitingInvitation).toBe(false);

    // someone who signed up themselves was never invited: nothing to resend
    const selfMade = await signUpNew('not-invited');
    const selfId = ((await testDb()('people').where({ email: selfMade.email }).first('id')) as { id: string }).id;
    expect((await admin.send('POST', `/api/people/${selfId}/invitation`)).status).toBe(409);
    // only admins
    expect((await selfMade.client.send('POST', `/api/people/${made.id}/invitation`)).status).toBe(403);
  });
});

describe("a person's own data", () => {
  it('the export holds the person’s rows and no one else’s (JSON and zip of CSVs)', async () => {
    const member = await Client.as('member');
    const memberId = (await body(await member.get('/api/me'))).id as string;
    const asked = new Date();
    const res = await member.get('/api/account/export');
    expect(res.status).toBe(200);
    const data = await body(res);
    expect(Object.keys(data)).toEqual(expect.arrayContaining(['person', 'clearances', 'quizAttempts', 'bookings', 'sessions', 'charges', 'faults']));
    expect(data.person).toMatchObject({ id: memberId, email: DEMO.member });
    const db = testDb();
    // every row of each part is theirs, and all of theirs are there (the seed gives the demo member clearances and bookings)
    let total = 0;
    for (const [part, table] of [['clearances', 'clearances'], ['quizAttempts', 'quiz_attempts'], ['bookings', 'bookings'], ['sessions', 'machine_sessions'], ['charges', 'charges']] as const) {
      const mine = (await db(table).where({ person_id: memberId }).pluck('id')).sort();
      total += mine.length;
      expect((data[part] as { id: string }[]).map((r) => r.id).sort(), part).toEqual(mine);
    }
    expect(data.clearances.length).toBeGreaterThan(0);
    expect(data.bookings.length).toBeGreaterThan(0);
    expect(total).toBeGreaterThan(data.clearances.length);
    // faults: files running beside this one (the parallel pass) report faults as the demo member, so "all of theirs"
    // is every fault they reported before the export was asked for (2 s margin for one still committing), and every
    // exported fault is theirs
    const exportedFaults = (data.faults as { id: string }[]).map((r) => r.id);
    const faultsBefore = (await db('faults').where({ reported_by: memberId }).where('created_at', '<', new Date(asked.getTime() - 2000)).pluck('id')) as string[];
    expect(faultsBefore.filter((id) => !exportedFaults.includes(id))).toEqual([]);
    expect(await db('faults').whereIn('id', exportedFaults).whereNot({ reported_by: memberId }).pluck('id')).toEqual([]);
    expect(new Set(exportedFaults).size).toBe(exportedFaults.length);
    // no other person's e-mail or id anywhere in it
    const text = JSON.stringify(data);
    for (const other of await db('people').whereNot({ id: memberId }).select('id', 'email')) {
      expect(text).not.toContain(other.id);
      expect(text).not.toContain(other.email);
    }

    const zip = await member.get('/api/account/export.zip');
    expect(zip.status).toBe(200);
    expect(zip.headers.get('content-type')).toBe('application/zip');
    const files = unzipSync(new Uint8Array(await zip.arrayBuffer()));
    expect(Object.keys(files).sort()).toEqual(['bookings.csv', 'charges.csv', 'clearances.csv', 'faults.csv', 'person.csv', 'quiz-attempts.csv', 'sessions.csv']);
    expect(strFromU8(files['person.csv']!)).toContain(DEMO.member);
    expect(strFromU8(files['bookings.csv']!).trim().split('\n')).toHaveLength(data.bookings.length + 1);

    expect((await new Client().get('/api/account/export')).status).toBe(401);
  });

  it('closing an account: anonymised, signed out everywhere, sign-in refused, audited', async () => {
    const p = await newPerson('close');
    const id = (await body(await p.client.get('/api/me'))).id as string;
    const other = await new Client(undefined, freshLoopbackAddress()).useSessionOf(p.email);
    expect((await p.client.send('POST', '/api/account/close', { confirm: true, password: 'wrong password here' })).status).toBe(403);
    const res = await p.client.send('POST', '/api/account/close', { confirm: true, password: p.password });
    expect(res.status).toBe(200);
    expect((await p.client.get('/api/me')).status).toBe(401);
    expect((await other.get('/api/me')).status).toBe(401);
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(p.email, p.password)).location).toContain('error');
    const row = await testDb()('people').where({ id }).first('name', 'email', 'active', 'closed_at');
    expect(row).toMatchObject({ name: 'Closed account', active: false });
    expect(row.email).not.toContain(p.email.split('@')[0]);
    expect(row.closed_at).not.toBeNull();
    const audit = await testDb()('audit_log').where({ kind: 'person.closed', subject_id: id }).first();
    expect(audit.summary).not.toContain(p.email);
    // the admin sees it in the audit
    const admin = await Client.as('admin');
    const list = await body(await admin.get('/api/audit?kind=person.closed'));
    expect(JSON.stringify(list)).toContain(id);
  });
});

describe('institution sign-in settings', () => {
  it('the sign-in page offers "Sign in with <site name>"; password sign-in can be turned off for the institution’s domain', async () => {
    const page = await (await new Client().get('/signin')).text();
    expect(page).toContain('Sign in with Tidewater Community Workshop');
    const admin = await Client.as('admin');
    const before = await body(await admin.get('/api/institution-sign-in'));
    expect(before).toMatchObject({ configured: true, domains: ['tidewater.example'] });
    expect(JSON.stringify(before)).not.toContain('secret');
    try {
      const put = await admin.send('PUT', '/api/institution-sign-in', { institutionName: 'Tidewater College', tierClaim: 'affiliation', tierMap: { student: 'student', staff: 'staff' }, passwordSignInOff: true });
      expect(put.status).toBe(200);
      expect(await (await new Client().get('/signin')).text()).toContain('Sign in with Tidewater College');
      const refused = await new Client(undefined, freshLoopbackAddress()).signInAs(DEMO.newbie, DEMO_PASSWORD);
      expect(refused.location).toContain('code=institution');
      // other domains still sign in with a password
      const outsider = `outsider-${Date.now()}@example.org`;
      expect((await signUpForm(new Client(undefined, freshLoopbackAddress()), outsider)).status).toBe(303);
      await confirmByDatabase(outsider);
      expect((await new Client(undefined, freshLoopbackAddress()).signInAs(outsider, 'a long enough phrase')).location).not.toContain('error');
    } finally {
      await admin.send('PUT', '/api/institution-sign-in', { institutionName: before.institutionName, tierClaim: before.tierClaim, tierMap: before.tierMap, passwordSignInOff: before.passwordSignInOff });
    }
    expect((await new Client(undefined, freshLoopbackAddress()).signInAs(DEMO.newbie, DEMO_PASSWORD)).location).not.toContain('error');
  });
});
