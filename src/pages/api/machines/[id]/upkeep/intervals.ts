import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { intervalsFor, setUpkeepInterval } from '@lib/server/upkeep';
import { intervalBody } from '@lib/session-schemas';

/** GET /api/machines/:id/upkeep/intervals (steward, admin) → each kind's interval (custom or the common-practice default). */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'steward', 'admin');
  return json(await intervalsFor(idParam(params.id, 'machine')));
});

/** PUT /api/machines/:id/upkeep/intervals {kind, beamHours, days} (admin) → the interval (audited). */
export const PUT = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin');
  const id = idParam(params.id, 'machine');
  const { kind, beamHours, days } = await readJson(request, intervalBody);
  return json(await setUpkeepInterval(person.id, id, kind, { beamHours, days }));
});
