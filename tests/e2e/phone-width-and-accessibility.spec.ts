/**
 * Every screen of each role, opened once on a 390 × 844 phone, checked for what would go wrong there:
 * - **width**: each role's navigation (src/lib/nav.ts) and the screens reached from it — the machine's QR page, its
 *   hazard sheet, Account, a receipt, Book with a machine chosen — and the admin's Machines screen with a controller
 *   registered on a machine with a long name. No screen may be wider than the phone: a failure names each element
 *   that sticks out past 390 px, screen by screen.
 * - **accessibility**: on the main screens (SCREENS below; the sign-in page signed out), axe-core finds no serious or
 *   critical violation at phone width and, the same page resized, at desk width (1280 × 800). axe is evaluated
 *   through the browser's debugging protocol, which the page's policy does not govern.
 * - **policy and errors**: on every screen the islands run under the Content-Security-Policy (no violation: zod's
 *   eval probe is off in the browser, src/lib/zod.ts), and there is no page error or console error.
 * One page load serves all three (decision record 0450). Screenshots (TEST_SCREENSHOTS=1): phone-<role>-<screen>.png,
 * a11y-<screen>-phone.png and a11y-<screen>-desk.png.
 */
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, eachAtOnce, hydrated, shot, watchErrors, settled, withBrowser } from '../support/browser';
import { axe } from '../support/axe';
import { Client, body } from '../support/client';
import { testDb } from '../support/db';
import type { DemoPerson } from '../support/env';
import { navFor } from '../../src/lib/nav';
import type { Role } from '../../src/lib/roles';

const web = withBrowser();
let admin: Client;
let longMachine: { id: string; code: string; name: string } | undefined;
const stamp = Date.now().toString(36);
// 80 characters is the longest name the Machines form takes
const LONG_NAME = `Studio laser with rotary attachment and honeycomb bed in the north bay ${stamp}`.slice(0, 80);

beforeAll(async () => {
  admin = await Client.as('admin');
  const groupId = ((await testDb()('machine_groups').orderBy('name').first('id')) as { id: string }).id;
  const code = `phone-${stamp}`;
  const res = await admin.send('POST', '/api/machines', {
    code, name: LONG_NAME, groupId, requiredLevel: 'basic', powerW: 40, tubeType: 'dc_glass', wavelengthUm: 10.6,
    bedWidthMm: 500, bedDepthMm: 300, beamDiameterMm: 6, divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water', coolantMinC: null, coolantMaxC: null,
  });
  const m = await body(res);
  expect(res.status, JSON.stringify(m)).toBe(201);
  longMachine = { id: m.id, code, name: LONG_NAME };
  const c = await admin.send('POST', '/api/controllers', { machineId: m.id, name: `Controller beside the extractor of the north bay ${stamp}`.slice(0, 60) });
  expect(c.status, await c.clone().text()).toBe(201);
});

afterAll(async () => {
  if (longMachine) await admin.send('POST', `/api/machines/${longMachine.id}/retire`, { reason: 'Test machine for the phone-width check, no longer needed.' });
});

/** The screens axe checks at both widths: who sees it, and what shows that its island has run. */
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

/**
 * What sticks out past `width`: elements whose right edge is beyond it and that no narrower scroll box clips. An
 * absolutely positioned element is clipped only by a scroll box at or above its nearest positioned ancestor, so a
 * visually hidden label inside a sideways-scrolling table still counts. Only the outermost of each offending
 * branch is named. The page's width is read first; the elements are looked for only when it is too wide (they
 * name the culprits in the failure; the check is the width).
 */
async function overflow(page: Page, width: number): Promise<{ scrollWidth: number; named: string[] }> {
  return page.evaluate((w) => {
    const scrollWidth = Math.max(document.documentElement.scrollWidth, document.body.scrollWidth);
    if (scrollWidth <= w) return { scrollWidth, named: [] };
    const isAbs = (cs: CSSStyleDeclaration) => cs.position === 'absolute' || cs.position === 'fixed';
    const clipped = (el: Element) => {
      let escaping = isAbs(getComputedStyle(el));
      for (let a = el.parentElement; a && a !== document.documentElement; a = a.parentElement) {
        const cs = getComputedStyle(a);
        if (escaping && cs.position === 'static') continue; // not the box it is placed in
        if (cs.overflowX !== 'visible' && a.getBoundingClientRect().right <= w + 1) return true;
        escaping = isAbs(cs);
      }
      return false;
    };
    const out = [...document.body.querySelectorAll('*')].filter((el) => el.getBoundingClientRect().right > w + 1 && !clipped(el));
    const outer = out.filter((el) => !el.parentElement || !out.includes(el.parentElement));
    const named = outer.slice(0, 6).map((el) => {
      const cls = (el.getAttribute('class') ?? '').trim();
      const label = el.id ? `#${el.id}` : cls ? `.${cls.split(/\s+/).join('.')}` : '';
      const text = (el.textContent ?? '').trim().replace(/\s+/g, ' ').slice(0, 40);
      return `<${el.tagName.toLowerCase()}${label}> "${text}" ends at ${Math.round(el.getBoundingClientRect().right)} px`;
    });
    return { scrollWidth, named };
  }, width);
}

async function cspViolations(page: Page): Promise<string[]> {
  return page.evaluate(() => (window as unknown as { __csp?: string[] }).__csp ?? []);
}

/** The screens of a role's navigation and the ones reached from them (the machine page, its hazard sheet, …). */
async function phoneScreens(who: DemoPerson, role: Role): Promise<string[]> {
  const db = testDb();
  const laserA = (await db('machines').where({ code: 'laser-a' }).first('id')) as { id: string };
  const person = (await db('people').where({ email: `${who}@tidewater.example` }).first('id')) as { id: string };
  const charge = (await db('charges').where({ person_id: person.id }).orderBy('created_at', 'desc').first('id')) as { id: string } | undefined;
  return [
    ...navFor([role]).map((n) => n.href),
    '/m/laser-a',
    `/hazard/${laserA.id}`,
    `/book?machine=${laserA.id}`,
    ...(charge ? [`/account/receipts/${charge.id}`] : []),
    ...(role === 'admin' ? [`/m/${longMachine!.code}`, `/hazard/${longMachine!.id}`, `/book?machine=${longMachine!.id}`] : []),
  ];
}

const PEOPLE: { who: DemoPerson | null; role: Role | null }[] = [
  { who: null, role: null },
  { who: 'member', role: 'member' },
  { who: 'instructor', role: 'instructor' },
  { who: 'steward', role: 'steward' },
  { who: 'admin', role: 'admin' },
];

/** Pages of one person open at a time (the five people's checks run side by side too): the screens only read. */
const PAGES_AT_ONCE = 2;

describe.concurrent('every screen fits a 390 px phone with no page error or policy violation; the main ones pass axe-core at phone and desk widths', () => {
  for (const { who, role } of PEOPLE) {
    const axeHere = SCREENS.filter((s) => s.who === who);
    it(`${who ?? 'signed out'}: ${role ? 'the screens of the role and the ones reached from them' : 'the sign-in page'}; axe on ${axeHere.map((s) => s.path).join(', ')}`, async ({ expect }) => {
      const paths = [...new Set([...(who && role ? await phoneScreens(who, role) : []), ...axeHere.map((s) => s.path)])];
      const { ctx } = await web.openAs(who, PHONE);
      await ctx.addInitScript(() => {
        const w = window as unknown as { __csp: string[] };
        w.__csp = [];
        document.addEventListener('securitypolicyviolation', (e) => w.__csp.push(`${e.violatedDirective} ${e.blockedURI} ${e.sourceFile}:${e.lineNumber}`));
      });
      const pages: { page: Page; errors: string[] }[] = [];
      const wide: string[] = [];
      const problems: string[] = [];
      const label = who ?? 'out';
      await eachAtOnce(paths, PAGES_AT_ONCE, async (path, slot) => {
        if (!pages[slot]) {
          const page = await ctx.newPage(); // Playwright's 30 s for a page load: the first ones meet a cold app
          pages[slot] = { page, errors: watchErrors(page) };
        }
        const { page } = pages[slot];
        const a11y = axeHere.find((s) => s.path === path);
        await page.setViewportSize(PHONE); // the slot's last screen may have ended at desk width
        const res = await page.goto(path);
        expect(res?.status(), path).toBeLessThan(400);
        await hydrated(page);
        if (a11y) await page.locator(a11y.ready).first().waitFor();
        await settled(page); // islands that load their rows after hydrating
        if (path === '/admin/machines') {
          // the screen as the lead measured it: the controller's row and the long name in the list
          await page.locator(`[data-machine-row="${longMachine!.code}"]`).waitFor();
          await page.getByRole('table', { name: 'Controllers' }).getByText(LONG_NAME).first().waitFor();
        }
        const { scrollWidth, named } = await overflow(page, PHONE.width);
        await shot(page, `phone-${label}${path.replace(/[^a-z0-9]+/gi, '-').replace(/-$/, '')}`);
        if (scrollWidth > PHONE.width) wide.push(`${path} is ${scrollWidth} px wide: ${named.join('; ') || '(nothing named)'}`);
        if (a11y) {
          const name = path.replace(/\W+/g, '-').replace(/^-|-$/g, '') || 'floor';
          for (const [width, viewport] of [['phone', PHONE], ['desk', DESK]] as const) {
            if (width === 'desk') {
              await page.setViewportSize(viewport);
              // a frame or two for layout and the islands' resize handlers
              await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
            }
            for (const v of await axe(page)) problems.push(`${path} (${width}): ${v}`);
            await shot(page, `a11y-${name}-${width}`);
          }
        }
        // every screen, not only the axe ones: nothing the page does is blocked by the Content-Security-Policy
        for (const v of await cspViolations(page)) problems.push(`${path}: policy violation ${v}`);
      });
      await ctx.close();
      expect.soft(wide, wide.join('\n')).toEqual([]);
      expect.soft(problems, problems.join('\n')).toEqual([]);
      expect(pages.flatMap((p) => p.errors)).toEqual([]);
    }, 300_000); // up to 25 screens, two at a time, each waiting for its network to settle
  }
});
