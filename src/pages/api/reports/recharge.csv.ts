import { z } from '@lib/zod';
import { readQuery, requireRole, route } from '@lib/server/http';
import { rechargeCsv } from '@lib/server/payments/account';
import { costCentre } from '@lib/schemas';
import { csvHeaders } from '@lib/csv';

const query = z.object({
  month: z.string().regex(/^\d{4}-(0[1-9]|1[0-2])$/, 'Use a month as YYYY-MM, e.g. 2026-12.'),
  costCentre: z.union([costCentre, z.literal('').transform(() => undefined)]).optional(),
});

/** GET /api/reports/recharge.csv?month=YYYY-MM&costCentre= (admin) → CSV of recharged charges with a TOTAL line. */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const q = readQuery(url, query);
  const { csv } = await rechargeCsv(q.month, q.costCentre);
  const name = `recharge-${q.month}${q.costCentre ? `-${q.costCentre.replace(/[^A-Za-z0-9-]/g, '_')}` : ''}.csv`;
  return new Response(csv, { headers: csvHeaders(name) });
});
