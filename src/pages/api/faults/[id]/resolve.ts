import { HttpError, json, readJson, requireRole, route } from '../../../../lib/server/http';
import { resolveFault } from '../../../../lib/server/faults';
import { faultJson } from '../../../../lib/server/fault-json';
import { resolveBody } from '../../../../lib/faults-shared';
import { uuid } from '../../../../lib/schemas';

/** POST /api/faults/:id/resolve { resolution } (steward, admin) → the fault, resolved; the reporter is e-mailed. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such fault.');
  const input = await readJson(request, resolveBody);
  return json(faultJson(await resolveFault(person, id.data, input.resolution)));
});
