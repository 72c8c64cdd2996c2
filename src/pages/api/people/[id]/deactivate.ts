import { HttpError, json, requireRole, route } from '../../../../lib/server/http';
import { deactivatePerson } from '../../../../lib/server/cascades/deactivate-person';
import { uuid } from '../../../../lib/schemas';

/**
 * POST /api/people/:id/deactivate (admin) → the person, now inactive: they cannot sign in and their
 * session ends at their next request. Audited. 409 when an admin tries it on themselves.
 */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'person_not_found', 'No person has that id.');
  const p = await deactivatePerson(admin.id, id.data);
  return json({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active });
});
