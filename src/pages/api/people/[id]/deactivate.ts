import { json, requireRole, route, idParam } from '@lib/server/http';
import { deactivatePerson } from '@lib/server/cascades/deactivate-person';


/**
 * POST /api/people/:id/deactivate (admin) → the person, now inactive: they cannot sign in and their
 * session ends at their next request. Audited. 409 when an admin tries it on themselves.
 */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const id = idParam(params.id, 'person');
  const p = await deactivatePerson(admin.id, id);
  return json({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active });
});
