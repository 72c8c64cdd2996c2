/**
 * A small HTTP client for integration tests: keeps cookies like a browser, signs in through the real
 * Auth.js credentials endpoint (CSRF token + form post) or with a session cookie written for the person
 * (Client.as, useSessionOf), and sends JSON with a same-site Origin.
 */
import http from 'node:http';
import { APP_URL, DEMO, type DemoPerson } from './env';
import { SESSION_COOKIE, sessionCookieFor } from './session';

/** A request sent from a chosen loopback source address (127.x.y.z), so the app sees another client address. */
async function fetchFrom(localAddress: string, url: URL, init: { method: string; headers: Headers; body?: BodyInit | null }): Promise<Response> {
  const headers: Record<string, string> = Object.fromEntries(init.headers.entries());
  let body: Buffer | undefined;
  if (init.body != null) {
    // any body fetch takes (form data, URLSearchParams, text, bytes), encoded as fetch would encode it
    const encoded = new Request(url, { method: 'POST', headers: init.headers, body: init.body });
    body = Buffer.from(await encoded.arrayBuffer());
    const type = encoded.headers.get('content-type');
    if (type) headers['content-type'] = type;
    headers['content-length'] = String(body.byteLength);
  }
  return new Promise((resolve, reject) => {
    const req = http.request({ host: url.hostname, port: url.port, path: url.pathname + url.search, method: init.method, headers, localAddress }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (c: Buffer) => chunks.push(c));
      res.on('end', () => {
        const h = new Headers();
        for (const [k, v] of Object.entries(res.headers)) for (const one of Array.isArray(v) ? v : v === undefined ? [] : [v]) h.append(k, one);
        const status = res.statusCode ?? 500;
        resolve(new Response([101, 204, 205, 304].includes(status) ? null : Buffer.concat(chunks), { status, headers: h }));
      });
      res.on('error', reject);
    });
    req.on('error', reject);
    req.end(body);
  });
}

let nextAddress = 0;
/** A loopback address no other client of this test process uses (127.20.0.1, 127.20.0.2, …). */
export function freshLoopbackAddress(): string {
  nextAddress += 1;
  return `127.${20 + (process.pid % 200)}.${Math.floor(nextAddress / 250) % 250}.${(nextAddress % 250) + 1}`;
}

export class Client {
  private jar = new Map<string, string>();

  /** `base`: another app process's address (tests of several processes); the test app by default. */
  constructor(
    private readonly base?: string,
    /** the loopback source address this client sends from (another "client address" for the app); default 127.0.0.1 */
    readonly localAddress?: string,
  ) {}

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
    const res = this.localAddress
      ? await fetchFrom(this.localAddress, new URL(path, this.url()), { method, headers, body })
      : await fetch(new URL(path, this.url()), { ...init, method, headers, body, redirect: 'manual' });
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

  /**
   * Signs in without the form: holds the session cookie Auth.js would have set for this person (support/session.ts).
   * The form itself (argon2, the throttle, the CSRF token) is tested through signInAs. The person is looked up in the
   * test database: an app on a database of its own (configured-services) is signed in to through signInAs.
   */
  async useSessionOf(email: string): Promise<this> {
    this.jar.set(SESSION_COOKIE, await sessionCookieFor(email));
    return this;
  }

  /** A client signed in as a demo person (through the session cookie, see useSessionOf). */
  static async as(who: DemoPerson, base?: string): Promise<Client> {
    return new Client(base).useSessionOf(DEMO[who]);
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
