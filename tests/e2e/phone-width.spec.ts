/**
 * Journey: each role, on a 390 × 844 phone, opens every screen of its navigation (src/lib/nav.ts) and the screens
 * reached from them — the machine's QR page, its hazard sheet, Account, a receipt, Book with a machine chosen —
 * and the admin's Machines screen with a controller registered on a machine with a long name. No screen may be
 * wider than the phone: a failure names each element that sticks out past 390 px, screen by screen.
 * Screenshots: phone-<role>-<screen>.png.
 */
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PHONE, eachAtOnce, hydrated, shot, watchErrors, settled, withBrowser } from '../support/browser';
import { Client, body } from '../support/client';
import { testDb } from '../support/db';
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

/**
 * What sticks out past `width`: elements whose right edge is beyond it and that no narrower scroll box clips. An
 * absolutely positioned element is clipped only by a scroll box at or above its nearest positioned ancestor, so a
 * visually hidden label inside a sideways-scrolling table still counts. Only the outermost of each offending
 * branch is named.
 */
async function overflow(page: Page, width: number): Promise<{ scrollWidth: number; named: string[] }> {
  return page.evaluate((w) => {
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
    return { scrollWidth: Math.max(document.documentElement.scrollWidth, document.body.scrollWidth), named };
  }, width);
}

async function personId(email: string): Promise<string> {
  return ((await testDb()('people').where({ email }).first('id')) as { id: string }).id;
}

const ROLES: { who: 'member' | 'instructor' | 'steward' | 'admin'; role: Role }[] = [
  { who: 'member', role: 'member' },
  { who: 'instructor', role: 'instructor' },
  { who: 'steward', role: 'steward' },
  { who: 'admin', role: 'admin' },
];

/** Pages of one role open at a time (the four roles run side by side too): the screens only read. */
const PAGES_AT_ONCE = 2;

describe.concurrent('every screen fits a 390 px phone', () => {
  for (const { who, role } of ROLES) {
    it(`${who}: the screens of the role and the ones reached from them`, async ({ expect }) => {
      const db = testDb();
      const laserA = (await db('machines').where({ code: 'laser-a' }).first('id')) as { id: string };
      const email = `${who}@tidewater.example`;
      const charge = (await db('charges').where({ person_id: await personId(email) }).orderBy('created_at', 'desc').first('id')) as { id: string } | undefined;
      const paths = [
        ...navFor([role]).map((n) => n.href),
        '/m/laser-a',
        `/hazard/${laserA.id}`,
        `/book?machine=${laserA.id}`,
        ...(charge ? [`/account/receipts/${charge.id}`] : []),
        ...(role === 'admin' ? [`/m/${longMachine!.code}`, `/hazard/${longMachine!.id}`, `/book?machine=${longMachine!.id}`] : []),
      ];
      const { ctx } = await web.openAs(who, PHONE);
      const pages: { page: Page; errors: string[] }[] = [];
      const wide: string[] = [];
      await eachAtOnce(paths, PAGES_AT_ONCE, async (path, slot) => {
        if (!pages[slot]) {
          const page = await ctx.newPage();
          pages[slot] = { page, errors: watchErrors(page) };
        }
        const { page } = pages[slot];
        const res = await page.goto(path);
        expect(res?.status(), path).toBeLessThan(400);
        await hydrated(page);
        await settled(page); // islands that load their rows after hydrating
        if (path === '/admin/machines') {
          // the screen as the lead measured it: the controller's row and the long name in the list
          await page.locator(`[data-machine-row="${longMachine!.code}"]`).waitFor();
          await page.getByRole('table', { name: 'Controllers' }).getByText(LONG_NAME).first().waitFor();
        }
        const { scrollWidth, named } = await overflow(page, PHONE.width);
        await shot(page, `phone-${who}${path.replace(/[^a-z0-9]+/gi, '-').replace(/-$/, '')}`);
        if (scrollWidth > PHONE.width) wide.push(`${path} is ${scrollWidth} px wide: ${named.join('; ') || '(nothing named)'}`);
      });
      expect(wide, wide.join('\n')).toEqual([]);
      expect(pages.flatMap((p) => p.errors)).toEqual([]);
      await ctx.close();
    }, 300_000); // up to 25 screens, two at a time, each waiting for its network to settle
  }
});
