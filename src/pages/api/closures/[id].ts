import { json, requireRole, route, HttpError } from '../../../lib/server/http';
import { removeClosure } from '../../../lib/server/booking-rules';
import { uuid } from '../../../lib/schemas';

/** DELETE /api/closures/:id (admin). */
export const DELETE = route(async ({ locals, params }) => {
  const person = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such closure.');
  await removeClosure(person.id, id.data);
  return json({ ok: true });
});
