/**
 * The main screens in Chromium at phone and desk widths: the islands run under the Content-Security-Policy
 * (no violation, no page error), and axe-core finds no serious or critical accessibility violation.
 * axe is evaluated through the browser's debugging protocol, which the page's policy does not govern.
 */
import type { Page } from 'playwright-core';
import { describe, it } from 'vitest';
import { DESK, PHONE, eachAtOnce, shot, watchErrors, hydrated, settled, withBrowser } from '../support/browser';
import { axe } from '../support/axe';
import type { DemoPerson } from '../support/env';

/** Screen, who sees it, and what shows that its island has run. */
const SCREENS: { path: string; who: DemoPerson | null; ready: string }[] = [
  { path: '/signin', who: null, ready: 'form' },
  { path: '/', who: 'member', ready: 'main' },
  { path: '/book', who: 'member', ready: '.fc-timegrid, .fc' },
  { path: '/clearances', who: 'member', ready: 'main' },
  { path: '/account', who: 'member', ready: 'main' },
  { path: '/quizzes', who: 'instructor', ready: 'main' },
  { path: '/admin/people', who: 'admin', ready: 'table' },
  { path: '/admin/materials', who: 'admin', ready: 'main' },
  { path: '/admin', who: 'admin', ready: 'main' },
  { path: '/admin/audit', who: 'admin', ready: 'table tbody tr' },
  { path: '/admin/labels', who: 'admin', ready: 'main' },
  { path: '/admin/pricing', who: 'admin', ready: 'main' },
  { path: '/reports', who: 'admin', ready: '[data-testid="util-totals"]' },
  { path: '/upkeep', who: 'steward', ready: 'main' },
];

const web = withBrowser();

async function cspViolations(page: Page): Promise<string[]> {
  return page.evaluate(() => (window as unknown as { __csp?: string[] }).__csp ?? []);
}

/** Pages of one person open at a time (the five people's checks run side by side too): the screens only read. */
const PAGES_AT_ONCE = 2;

describe.concurrent('main screens under the Content-Security-Policy, checked with axe-core at phone and desk widths', () => {
  const byWho = new Map<string, typeof SCREENS>();
  for (const s of SCREENS) byWho.set(s.who ?? 'out', [...(byWho.get(s.who ?? 'out') ?? []), s]);
  for (const [who, screens] of byWho) {
    it(`${who}: ${screens.map((s) => s.path).join(', ')} — no policy violation, no page error, no serious or critical violation`, async ({ expect }) => {
      const problems: string[] = [];
      // one page load per screen: checked at desk width, then resized to phone width and checked again
      const { ctx, page: first, errors: firstErrors } = await web.openAs(who === 'out' ? null : who, DESK);
      await ctx.addInitScript(() => {
        const w = window as unknown as { __csp: string[] };
        w.__csp = [];
        document.addEventListener('securitypolicyviolation', (e) => w.__csp.push(`${e.violatedDirective} ${e.blockedURI} ${e.sourceFile}:${e.lineNumber}`));
      });
      const pages: { page: Page; errors: string[] }[] = [{ page: first, errors: firstErrors }];
      await eachAtOnce(screens, PAGES_AT_ONCE, async (s, slot) => {
        if (!pages[slot]) {
          const page = await ctx.newPage();
          pages[slot] = { page, errors: watchErrors(page) };
        }
        const { page } = pages[slot];
        page.setDefaultTimeout(20_000);
        await page.setViewportSize(DESK);
        await page.goto(s.path);
        await hydrated(page);
        await page.locator(s.ready).first().waitFor();
        await settled(page);
        const name = s.path.replace(/\W+/g, '-').replace(/^-|-$/g, '') || 'floor';
        for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
          if (label === 'phone') {
            await page.setViewportSize(viewport);
            await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
          }
          for (const v of await axe(page)) problems.push(`${s.path} (${label}): ${v}`);
          await shot(page, `a11y-${name}-${label}`);
        }
        for (const v of await cspViolations(page)) problems.push(`${s.path}: policy violation ${v}`);
      });
      for (const e of pages.flatMap((p) => p.errors)) problems.push(`${who}: ${e}`);
      await ctx.close();
      expect(problems, problems.join('\n')).toEqual([]);
    }, 300_000);
  }
});
