/**
 * axe-core in a spec's page: the serious and critical violations of the page as it is now, and the same check at
 * desk then phone width. axe runs through the browser's debugging protocol, which the page's
 * Content-Security-Policy does not govern; it is put into each document once.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Page } from 'playwright-core';
import { DESK, PHONE, shot } from './browser';

const AXE = fs.readFileSync(path.resolve(import.meta.dirname, '..', '..', 'node_modules', 'axe-core', 'axe.min.js'), 'utf8');

interface AxeResult {
  violations: { id: string; impact: string | null; help: string; nodes: { target: string[] }[] }[];
}

/**
 * axe's own rule set, less the rules whose every finding is minor or moderate: each axe rule carries one impact,
 * which its violations take, and only serious and critical ones are reported here — running the others cost
 * a tenth of each run and could not fail the check. A rule without an impact (none in axe-core 4.14) still runs.
 */
const RUN = `axe.run(document, {
  resultTypes: ['violations'],
  rules: Object.fromEntries((axe._audit?.rules ?? []).filter((r) => r.impact === 'minor' || r.impact === 'moderate').map((r) => [r.id, { enabled: false }])),
})`;

/** Serious or critical violations, each as "impact rule — help at selector, …". */
export async function axe(page: Page): Promise<string[]> {
  // half a megabyte of script to parse: once per document, then run at each width
  if (!(await page.evaluate(() => 'axe' in window))) await page.evaluate(AXE);
  const result = (await page.evaluate(RUN)) as AxeResult;
  return result.violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map((v) => `${v.impact} ${v.id} — ${v.help} at ${v.nodes.slice(0, 3).map((n) => n.target.join(' ')).join(', ')}`);
}

/** axe at desk width, then the same page at phone width (screenshots of both); the page is left at desk width. */
export async function checkBothWidths(page: Page, name: string): Promise<string[]> {
  const problems: string[] = [];
  for (const [label, viewport] of [['desk', DESK], ['phone', PHONE]] as const) {
    await page.setViewportSize(viewport);
    // a frame or two for layout and the islands' resize handlers
    await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
    for (const v of await axe(page)) problems.push(`${name} (${label}): ${v}`);
    await shot(page, `${name}-${label}`);
  }
  await page.setViewportSize(DESK);
  return problems;
}
