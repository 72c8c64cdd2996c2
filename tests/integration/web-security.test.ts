/**
 * Web security of the running app: headers and the page policy, session cookie flags, Astro's origin check,
 * no account enumeration in sign-in or sign-up answers, and no secret in the built client files.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { Client } from '../support/client';
import { clearSignInLimits, closeTestDb } from '../support/db';
import { APP_URL, DEMO, DEMO_PASSWORD } from '../support/env';
import { to, waitForMail } from '../support/mail';

afterAll(async () => {
  await clearSignInLimits();
  await closeTestDb();
});

describe('headers', () => {
  it('a page: nosniff, same-origin referrer, no framing, and a script policy without unsafe-inline', async () => {
    const c = await Client.as('member');
    const res = await c.get('/book');
    expect(res.status).toBe(200);
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(res.headers.get('referrer-policy')).toBe('same-origin');
    expect(res.headers.get('x-frame-options')).toBe('DENY');
    const csp = res.headers.get('content-security-policy') ?? '';
    expect(csp).toContain("frame-ancestors 'none'");
    expect(csp).toContain("object-src 'none'");
    expect(csp).toContain("form-action 'self'");
    const script = /script-src ([^;]*)/.exec(csp)?.[1] ?? '';
    expect(script).toContain("'self'");
    expect(script).not.toContain('unsafe-inline');
    expect(script).not.toContain('unsafe-eval');
    // every inline script of the page is named by its hash
    const html = await res.text();
    const inline = [...html.matchAll(/<script\b(?![^>]*\bsrc=)[^>]*>([\s\S]*?)<\/script>/gi)];
    const { createHash } = await import('node:crypto');
    for (const m of inline) expect(script).toContain(`'sha256-${createHash('sha256').update(m[1]!).digest('base64')}'`);
    expect(html).not.toMatch(/\son(click|load|error|submit)=/i);
  });

  it('JSON answers load nothing and cannot be framed', async () => {
    const res = await new Client().get('/api/me');
    expect(res.headers.get('content-security-policy')).toContain("default-src 'none'");
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
  });
});

describe('session cookie and origin check', () => {
  it('the session cookie is HttpOnly, SameSite=Lax, path /; not Secure over plain http', async () => {
    const c = new Client();
    const csrf = (await (await c.get('/api/auth/csrf')).json()) as { csrfToken: string };
    const res = await c.fetch('/api/auth/callback/credentials', {
      method: 'POST',
      body: new URLSearchParams({ csrfToken: csrf.csrfToken, email: DEMO.member, password: DEMO_PASSWORD, callbackUrl: '/' }),
      headers: { 'content-type': 'application/x-www-form-urlencoded' },
    });
    const session = res.headers.getSetCookie().find((s) => /session-token=/.test(s));
    expect(session, 'a session cookie is set').toBeDefined();
    expect(session).toMatch(/;\s*HttpOnly/i);
    expect(session).toMatch(/;\s*SameSite=Lax/i);
    expect(session).toMatch(/;\s*Path=\//i);
    expect(session).not.toMatch(/;\s*Secure/i); // served over http here; Auth.js adds Secure (and __Secure-) over https
  });

  it('a write from another site is refused by the origin check (403), with or without a session', async () => {
    const c = await Client.as('member');
    for (const [p, type, b] of [['/api/calendar-feed', 'application/json', '{}'], ['/signout', 'application/x-www-form-urlencoded', '']] as const) {
      const res = await c.fetch(p, { method: 'POST', body: b, headers: { 'content-type': type, origin: 'https://evil.example' } });
      expect(res.status, p).toBe(403);
    }
    expect((await c.get('/api/me')).status).toBe(200); // the sign-out above was refused
  });
});

describe('no account enumeration', () => {
  it('sign-in answers an unknown address and a wrong password the same way', async () => {
    const a = await new Client().signInAs('nobody-here@tidewater.example', 'some wrong password');
    const b = await new Client().signInAs(DEMO.steward, 'some wrong password');
    expect(a.status).toBe(b.status);
    expect(a.location).toBe(b.location);
    const pageA = await (await new Client().get(a.location.replace(APP_URL(), ''))).text();
    const pageB = await (await new Client().get(b.location.replace(APP_URL(), ''))).text();
    const msg = (h: string) => /role="alert"[^>]*>([^<]*)</.exec(h)?.[1] ?? '';
    expect(msg(pageA)).toBe(msg(pageB));
  });

  it('sign-up answers a new and a registered address the same way; the owner learns which by e-mail', async () => {
    const post = async (email: string) => {
      const c = new Client();
      const res = await c.fetch('/signup', {
        method: 'POST',
        body: new URLSearchParams({ name: 'Someone Curious', email, password: 'a long enough phrase for this' }),
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
      });
      return { status: res.status, location: res.headers.get('location'), cookies: res.headers.getSetCookie().filter((s) => /session-token=/.test(s)) };
    };
    const fresh = `fresh-${Date.now()}@example.org`;
    const taken = await post(DEMO.instructor);
    const free = await post(fresh);
    expect(taken).toEqual(free);
    expect(free.status).toBe(303);
    expect(free.cookies).toEqual([]);
    const page = await (await new Client().get(free.location!)).text();
    expect(page).toContain('Check your inbox');
    expect((await waitForMail((m) => to(DEMO.instructor)(m) && /already have an account/.test(m.subject))).subject).toMatch(/already have an account/);
    expect((await waitForMail((m) => to(fresh)(m) && /confirm your e-mail address/.test(m.subject))).subject).toMatch(/confirm your e-mail address/);
  });
});

describe('the built client files hold no secret', () => {
  it('no AUTH_SECRET, database password, payment keys or their names in dist-test/client', () => {
    const root = path.resolve(import.meta.dirname, '..', '..', 'dist-test', 'client');
    expect(fs.existsSync(root), 'the test build exists').toBe(true);
    const dbPassword = decodeURIComponent(new URL(process.env.DATABASE_URL!).password);
    const needles: [string, string][] = [
      ['AUTH_SECRET value', process.env.AUTH_SECRET!],
      ['database password', dbPassword],
      ['STRIPE_SECRET_KEY value', process.env.STRIPE_SECRET_KEY!],
      ['STRIPE_WEBHOOK_SECRET value', process.env.STRIPE_WEBHOOK_SECRET!],
      ['a Stripe secret key prefix', 'sk_test_'],
      ['a Stripe live key prefix', 'sk_live_'],
      ['the DATABASE_URL name', 'DATABASE_URL'],
      ['the AUTH_SECRET name', 'AUTH_SECRET'],
    ];
    for (const [, v] of needles) expect(v && v.length >= 8).toBe(true);
    const found: string[] = [];
    let files = 0;
    const walk = (dir: string) => {
      for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
        const full = path.join(dir, e.name);
        if (e.isDirectory()) walk(full);
        else {
          files += 1;
          const text = fs.readFileSync(full).toString('latin1');
          for (const [what, v] of needles) if (text.includes(v)) found.push(`${path.relative(root, full)} contains ${what}`);
        }
      }
    };
    walk(root);
    expect(files).toBeGreaterThan(5);
    expect(found).toEqual([]);
  });
});
