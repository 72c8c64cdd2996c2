/**
 * A small HTTP client for integration tests: keeps cookies like a browser, signs in through the real
 * Auth.js credentials endpoint (CSRF token + form post), and sends JSON with a same-site Origin.
 */
import { APP_URL, DEMO, DEMO_PASSWORD, type DemoPerson } from './env';

export class Client {
  private jar = new Map<string, string>();

  /** `base`: another app process's address (tests of several processes); the test app by default. */
  constructor(private readonly base?: string) {}

  private url(): string {
    return this.base ?? APP_URL();
  }

  private store(res: Response): void {
    for (const raw of res.headers.getSetCookie()) {
      const [pair] = raw.split(';');
      const eq = pair!.indexOf('=');
      const name = pair!.slice(0, eq).trim();
      const value = pair!.slice(eq + 1).trim();
      if (!value || /max-age=0/i.test(raw) || /expires=thu, 01 jan 1970/i.test(raw)) this.jar.delete(name);
      else this.jar.set(name, value);
    }
  }

  cookieHeader(): string {
    return [...this.jar].map(([k, v]) => `${k}=${v}`).join('; ');
  }

  cookie(name: string): string | undefined {
    return this.jar.get(name);
  }

  async fetch(path: string, init: RequestInit & { json?: unknown } = {}): Promise<Response> {
    const headers = new Headers(init.headers);
    if (this.jar.size) headers.set('cookie', this.cookieHeader());
    const method = (init.method ?? 'GET').toUpperCase();
    if (method !== 'GET' && method !== 'HEAD' && !headers.has('origin')) headers.set('origin', this.url());
    let body = init.body;
    if (init.json !== undefined) {
      headers.set('content-type', 'application/json');
      body = JSON.stringify(init.json);
    }
    const res = await fetch(new URL(path, this.url()), { ...init, method, headers, body, redirect: 'manual' });
    this.store(res);
    return res;
  }

  get(path: string): Promise<Response> {
    return this.fetch(path);
  }

  send(method: string, path: string, json?: unknown): Promise<Response> {
    return this.fetch(path, { method, json });
  }

  /** Signs in through the credentials form's endpoint; returns the redirect target Auth.js answered with. */
  async signInAs(email: string, password: string): Promise<{ status: number; location: string }> {
    const csrf = (await (await this.get('/api/auth/csrf')).json()) as { csrfToken: string };
    const form = new URLSearchParams({ csrfToken: csrf.csrfToken, email, password, callbackUrl: '/' });
    const res = await this.fetch('/api/auth/callback/credentials', {
      method: 'POST',
      body: form,
      headers: { 'content-type': 'application/x-www-form-urlencoded' },
    });
    return { status: res.status, location: res.headers.get('location') ?? '' };
  }

  static async as(who: DemoPerson, base?: string): Promise<Client> {
    const c = new Client(base);
    const r = await c.signInAs(DEMO[who], DEMO_PASSWORD);
    if (r.location.includes('error')) throw new Error(`sign-in as ${who} failed: ${r.location}`);
    return c;
  }
}

export async function body<T = any>(res: Response): Promise<T> {
  const text = await res.text();
  try {
    return JSON.parse(text) as T;
  } catch {
    throw new Error(`expected JSON, got ${res.status}: ${text.slice(0, 300)}`);
  }
}
