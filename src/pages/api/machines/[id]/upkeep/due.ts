import { json, requireRole, route, idParam } from '@lib/server/http';
import { upkeepStatus } from '@lib/server/upkeep';

/** GET /api/machines/:id/upkeep/due (steward, admin) → tube hours, rate of use and the due list, most urgent first. */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'steward', 'admin');
  return json(await upkeepStatus(idParam(params.id, 'machine')));
});
