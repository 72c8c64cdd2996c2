/** Headless Chromium from Debian's package, driven by playwright-core (no browser download). */
import { chromium, type Browser, type BrowserContext, type BrowserContextOptions, type Download, type Page, type Request } from 'playwright-core';
import { afterAll, beforeAll, inject } from 'vitest';
import { CHROMIUM_ARGS, CHROMIUM_EXECUTABLE, CHROMIUM_IGNORED_DEFAULTS } from './browser-args';
import { closeTestDb } from './db';
import { APP_URL, DEMO, DEMO_PASSWORD, type DemoPerson } from './env';
import { SESSION_COOKIE, sessionCookieFor } from './session';

/**
 * The browser of a spec file: a connection to the run's one Chromium (support/browser-server.ts), or a browser of
 * its own when the file runs outside the e2e project's set-up. Closing it closes the file's contexts.
 */
export async function launch(): Promise<Browser> {
  const shared = inject('chromiumWsEndpoint');
  if (shared) return chromium.connect(shared);
  return chromium.launch({ executablePath: CHROMIUM_EXECUTABLE, headless: true, args: CHROMIUM_ARGS, ignoreDefaultArgs: CHROMIUM_IGNORED_DEFAULTS });
}

export const PHONE = { width: 390, height: 844 };
export const DESK = { width: 1280, height: 800 };

/**
 * A context of its own. Service workers are blocked unless `options` allows them (`serviceWorkers: 'allow'`): the QR
 * pages' worker fetches every built file a page names into its cache, in every new context, and only the offline
 * file (qr-offline.spec.ts) is about what it does.
 */
export async function newContext(browser: Browser, viewport = DESK, options: BrowserContextOptions = {}): Promise<BrowserContext> {
  const ctx = await browser.newContext({ baseURL: APP_URL(), viewport, locale: 'en-NZ', serviceWorkers: 'block', ...options });
  ctx.on('page', track);
  return ctx;
}

/** Who a page is opened for: a demo person, a person of the file's own (by e-mail), or nobody (signed out). */
export type Who = DemoPerson | string | null;

/** Puts the session cookie of `who` into the context (support/session.ts): every page opened in it is signed in. */
export async function signInContext(ctx: BrowserContext, who: DemoPerson | string): Promise<void> {
  const email = who in DEMO ? DEMO[who as DemoPerson] : who;
  await ctx.addCookies([{ name: SESSION_COOKIE, value: await sessionCookieFor(email), url: APP_URL(), httpOnly: true, sameSite: 'Lax' }]);
}

/** A page of the test's own: its context (already signed in as `who`, without a page load) and the page's errors. */
export interface OpenPage {
  ctx: BrowserContext;
  page: Page;
  errors: string[];
}

/**
 * The browser of a spec file: `beforeAll` connects (launch), `afterAll` closes it and the file's database connection
 * (register the file's own `afterAll` after this call: it runs first). `openAs(who, viewport)` gives a new context
 * signed in with the session cookie and a page in it, watched for errors; `browser` is there for anything else.
 */
export function withBrowser(): { readonly browser: Browser; openAs: (who: Who, viewport?: { width: number; height: number }, options?: BrowserContextOptions) => Promise<OpenPage> } {
  let browser: Browser | undefined;
  beforeAll(async () => {
    browser = await launch();
  });
  afterAll(async () => {
    await browser?.close();
    await closeTestDb();
  });
  const web = {
    get browser(): Browser {
      if (!browser) throw new Error('withBrowser(): the browser is there from beforeAll on');
      return browser;
    },
    async openAs(who: Who, viewport = DESK, options: BrowserContextOptions = {}): Promise<OpenPage> {
      const ctx = await newContext(web.browser, viewport, options);
      if (who) await signInContext(ctx, who);
      const page = await ctx.newPage();
      return { ctx, page, errors: watchErrors(page) };
    },
  };
  return web;
}

/**
 * Runs `fn` on every item, at most `width` at a time (each slot number 0…width-1 is busy with one item at a time, so
 * a slot can keep a page of its own): screens that only read are checked side by side, in the waits of each other.
 */
export async function eachAtOnce<T>(items: readonly T[], width: number, fn: (item: T, slot: number) => Promise<void>): Promise<void> {
  let next = 0;
  await Promise.all(
    Array.from({ length: Math.min(width, items.length) }, async (_, slot) => {
      while (next < items.length) {
        try {
          await fn(items[next++]!, slot);
        } catch (e) {
          next = items.length; // the other slots finish their item and stop
          throw e;
        }
      }
    }),
  );
}

/** The requests each page has in flight, counted from when the page opened (see `settled`). */
const inFlight = new WeakMap<Page, { open: Set<Request>; lastChange: number }>();

function track(page: Page): { open: Set<Request>; lastChange: number } {
  const known = inFlight.get(page);
  if (known) return known;
  const state = { open: new Set<Request>(), lastChange: Date.now() };
  inFlight.set(page, state);
  const done = (r: Request) => {
    if (state.open.delete(r)) state.lastChange = Date.now();
  };
  page.on('request', (r) => {
    state.open.add(r);
    state.lastChange = Date.now();
  });
  page.on('requestfinished', done);
  page.on('requestfailed', done);
  page.on('close', () => state.open.clear());
  return state;
}

/**
 * Waits until the page has loaded and no request of it has been in flight for `quietMs` — what Playwright's
 * 'networkidle' does with a fixed 500 ms of quiet, here with a shorter quiet time (islands that fetch their rows
 * after hydrating start within a few milliseconds). Pages of contexts made by `newContext` are counted from
 * their first request; any other page from this call on.
 */
export async function settled(page: Page, quietMs = 120, timeoutMs = 20_000): Promise<void> {
  const state = track(page);
  await page.waitForLoadState('load');
  const until = Date.now() + timeoutMs;
  for (;;) {
    if (state.open.size === 0 && Date.now() - state.lastChange >= quietMs) return;
    if (Date.now() > until) throw new Error(`still loading after ${timeoutMs} ms: ${[...state.open].map((r) => r.url()).slice(0, 5).join(', ')}`);
    await new Promise((r) => setTimeout(r, 20));
  }
}

/**
 * Signs in without the form (the session cookie written by support/session.ts: no argon2, no form round trips),
 * then opens where the form would have led: the `callbackUrl` of the sign-in page the browser is on, or the floor.
 * The sign-in form itself is tested through signInThroughForm (tests/e2e/sign-in-by-role.spec.ts).
 */
export async function signIn(page: Page, who: DemoPerson | string): Promise<void> {
  await signInContext(page.context(), who);
  // the sign-in page sends a signed-in person on to its callbackUrl
  const here = page.url();
  await page.goto(here.includes('/signin') ? here : '/signin');
}

/** Signs in through the real form, as a person would (for the tests of the form, a wrong password, a refusal). */
export async function signInThroughForm(page: Page, who: DemoPerson | string, password = DEMO_PASSWORD): Promise<void> {
  const email = who in DEMO ? DEMO[who as DemoPerson] : who;
  if (!page.url().includes('/signin')) await page.goto('/signin');
  await page.getByLabel('E-mail').fill(email);
  await page.getByLabel('Password').fill(password);
  await Promise.all([page.waitForLoadState('load'), page.getByRole('button', { name: 'Sign in', exact: true }).click()]);
  await settled(page);
}

/** Collects uncaught page errors and console errors, so a spec can assert there were none. */
export function watchErrors(page: Page): string[] {
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(`pageerror: ${e.message}`));
  page.on('console', (m) => {
    if (m.type() === 'error') errors.push(`console: ${m.text()}`);
  });
  return errors;
}

/**
 * Screenshots for people to look at, in the git-ignored screenshots/ folder — taken when TEST_SCREENSHOTS=1
 * (`TEST_SCREENSHOTS=1 npm test -- tests/e2e/…`). A full-page picture costs a third of a second, and the specs take
 * over two hundred, so a plain `npm test` leaves them out; what the specs check does not depend on them.
 */
export const SCREENSHOTS = process.env.TEST_SCREENSHOTS === '1';

export async function shot(page: Page, name: string): Promise<void> {
  if (SCREENSHOTS) await page.screenshot({ path: `screenshots/${name}.png`, fullPage: true });
}

/**
 * Waits until every island on the page has hydrated (Astro drops the `ssr` attribute when it has). Typing into a
 * server-rendered island before then is lost: React takes over the input without having seen the change.
 */
export async function hydrated(page: Page, timeoutMs = 30_000): Promise<void> {
  await page.waitForFunction(() => document.querySelectorAll('astro-island[ssr]').length === 0, undefined, { timeout: timeoutMs });
}

/** The text of a finished download (read through the browser connection: the file sits with the browser process). */
export async function downloadedText(download: Download): Promise<string> {
  const stream = await download.createReadStream();
  const chunks: Buffer[] = [];
  for await (const chunk of stream) chunks.push(chunk as Buffer);
  return Buffer.concat(chunks).toString('utf8');
}
