import { json, readJson, requireRole, route, idParam, DomainError } from '@lib/server/http';
import { getMachine, updateMachine } from '@lib/server/machines';
import { machineFields } from '@lib/schemas';

const patchBody = machineFields.partial().refine((v) => Object.keys(v).length > 0, 'Send at least one field to change.');

/** GET /api/machines/:id → everything an admin sets on the machine (admin). */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'admin');
  const m = await getMachine(idParam(params.id, 'machine'));
  if (!m) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
  return json(m);
});

/** PATCH /api/machines/:id → the machine after the change (admin; audited). The code cannot change: it is on the label. */
export const PATCH = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin');
  const id = idParam(params.id, 'machine');
  const input = await readJson(request, patchBody);
  return json(await updateMachine(person.id, id, input));
});
