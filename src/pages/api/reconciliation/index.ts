import { z } from '@lib/zod';
import { json, readJson, requireRole, route } from '@lib/server/http';
import { listRuns, periodOfDays, runReconciliation } from '@lib/server/reconciliation';

const day = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date as YYYY-MM-DD.');
const body = z.object({ from: day, to: day }).strict().refine((b) => b.to >= b.from, { path: ['to'], message: '`to` is on or after `from`.' })
  .refine((b) => Date.parse(b.to) - Date.parse(b.from) <= 92 * 86_400_000, { path: ['to'], message: 'At most 93 days at a time.' });

/** GET /api/reconciliation (admin) → the latest runs. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json({ runs: await listRuns() });
});

/** POST /api/reconciliation {from, to} (admin; site days, both included) → 201 with the run and its differences. */
export const POST = route(async ({ locals, request }) => {
  requireRole(locals, 'admin');
  const input = await readJson(request, body);
  const { from, to } = await periodOfDays(input.from, input.to);
  return json(await runReconciliation(from, to, 'admin'), 201);
});
