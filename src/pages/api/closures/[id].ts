import { json, requireRole, route, idParam } from '@lib/server/http';
import { removeClosure } from '@lib/server/booking-rules';


/** DELETE /api/closures/:id (admin). */
export const DELETE = route(async ({ locals, params }) => {
  const person = requireRole(locals, 'admin');
  const id = idParam(params.id, 'closure');
  await removeClosure(person.id, id);
  return json({ ok: true });
});
