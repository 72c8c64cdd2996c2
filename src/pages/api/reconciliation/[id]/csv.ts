import { DomainError, requireRole, route } from '@lib/server/http';
import { getRun, runCsv } from '@lib/server/reconciliation';

/** GET /api/reconciliation/:id/csv (admin) → the run's differences as CSV. */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'admin');
  const run = await getRun(params.id ?? '');
  if (!run) throw new DomainError('not_found', 'not_found', 'No reconciliation run has that id.');
  return new Response(runCsv(run), {
    headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="reconciliation-${run.from.toISOString().slice(0, 10)}.csv"`, 'cache-control': 'no-store' },
  });
});
