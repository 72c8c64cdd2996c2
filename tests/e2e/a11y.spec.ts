/**
 * The main screens in Chromium at phone and desk widths: the islands run under the Content-Security-Policy
 * (no violation, no page error), and axe-core finds no serious or critical accessibility violation.
 * axe is evaluated through the browser's debugging protocol, which the page's policy does not govern.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, launch, newContext, shot, signIn, watchErrors } from '../support/browser';
import { clearSignInLimits, closeTestDb } from '../support/db';
import type { DemoPerson } from '../support/env';

const AXE = fs.readFileSync(path.resolve(import.meta.dirname, '..', '..', 'node_modules', 'axe-core', 'axe.min.js'), 'utf8');

/** Screen, who sees it, and what shows that its island has run; `phone` screens are checked at both widths. */
const SCREENS: { path: string; who: DemoPerson | null; ready: string; phone?: true }[] = [
  { phone: true, path: '/signin', who: null, ready: 'form' },
  { path: '/', who: 'member', ready: 'main' },
  { phone: true, path: '/book', who: 'member', ready: '.fc-timegrid, .fc' },
  { path: '/clearances', who: 'member', ready: 'main' },
  { phone: true, path: '/account', who: 'member', ready: 'main' },
  { path: '/materials', who: 'member', ready: 'main' },
  { phone: true, path: '/quizzes', who: 'instructor', ready: 'main' },
  { phone: true, path: '/admin/people', who: 'admin', ready: 'table' },
  { phone: true, path: '/admin/materials', who: 'admin', ready: 'main' },
  { path: '/admin/pricing', who: 'admin', ready: 'main' },
];

let browser: Browser;
beforeAll(async () => {
  browser = await launch();
});
afterAll(async () => {
  await browser?.close();
  await clearSignInLimits();
  await closeTestDb();
});

interface AxeResult {
  violations: { id: string; impact: string | null; help: string; nodes: { target: string[] }[] }[];
}

async function axe(page: Page): Promise<AxeResult['violations']> {
  await page.evaluate(AXE);
  const result = (await page.evaluate(`axe.run(document, { resultTypes: ['violations'] })`)) as AxeResult;
  return result.violations.filter((v) => v.impact === 'serious' || v.impact === 'critical');
}

async function cspViolations(page: Page): Promise<string[]> {
  return page.evaluate(() => (window as unknown as { __csp?: string[] }).__csp ?? []);
}

describe('main screens under the Content-Security-Policy, checked with axe-core', () => {
  for (const [label, viewport] of [['phone', PHONE], ['desk', DESK]] as const) {
    it(`${label}: no policy violation, no page error, no serious or critical accessibility violation`, async () => {
      const problems: string[] = [];
      const byWho = new Map<string, typeof SCREENS>();
      for (const s of SCREENS.filter((x) => label === 'desk' || x.phone)) byWho.set(s.who ?? 'out', [...(byWho.get(s.who ?? 'out') ?? []), s]);
      for (const [who, screens] of byWho) {
        const ctx = await newContext(browser, viewport);
        await ctx.addInitScript(() => {
          const w = window as unknown as { __csp: string[] };
          w.__csp = [];
          document.addEventListener('securitypolicyviolation', (e) => w.__csp.push(`${e.violatedDirective} ${e.blockedURI} ${e.sourceFile}:${e.lineNumber}`));
        });
        const page = await ctx.newPage();
        page.setDefaultTimeout(15_000);
        const errors = watchErrors(page);
        if (who !== 'out') await signIn(page, who);
        for (const s of screens) {
          await page.goto(s.path);
          await page.waitForLoadState('networkidle');
          await page.locator(s.ready).first().waitFor();
          for (const v of await cspViolations(page)) problems.push(`${s.path} (${label}): policy violation ${v}`);
          for (const v of await axe(page)) problems.push(`${s.path} (${label}): ${v.impact} ${v.id} — ${v.help} at ${v.nodes.slice(0, 3).map((n) => n.target.join(' ')).join(', ')}`);
          await shot(page, `a11y-${s.path.replace(/\W+/g, '-').replace(/^-|-$/g, '') || 'floor'}-${label}`);
        }
        for (const e of errors) problems.push(`${who} (${label}): ${e}`);
        await ctx.close();
      }
      expect(problems, problems.join('\n')).toEqual([]);
    }, 180_000);
  }
});
