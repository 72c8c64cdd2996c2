import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { triageFault } from '@lib/server/faults/triage';
import { faultJson } from '@lib/server/fault-json';
import { triageBody } from '@lib/faults-shared';


/** POST /api/faults/:id/triage { severity?, note? } (steward, admin) → the fault, triaged. A change to `stop` takes the machine out of service. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'fault');
  const input = await readJson(request, triageBody);
  return json(faultJson(await triageFault(person, id, input)));
});
