import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { listUpkeep, logUpkeep } from '@lib/server/upkeep';
import { upkeepBody } from '@lib/session-schemas';

/** GET /api/machines/:id/upkeep (steward, admin) → the machine's upkeep log, newest first. */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'steward', 'admin');
  return json(await listUpkeep({ machineId: idParam(params.id, 'machine') }));
});

/** POST /api/machines/:id/upkeep {kind, performedAt?, notes, tubeModel?, tubeRatedHours?} (steward, admin) → 201 the entry (audited). */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'machine');
  const input = await readJson(request, upkeepBody);
  return json(await logUpkeep(person.id, id, input), 201);
});
