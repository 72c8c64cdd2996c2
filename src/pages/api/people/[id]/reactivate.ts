import { json, requireRole, route, idParam } from '@lib/server/http';
import { reactivatePerson } from '@lib/server/people';


/** POST /api/people/:id/reactivate (admin) → the person, active again (they may sign in). Audited. */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const id = idParam(params.id, 'person');
  const p = await reactivatePerson(admin.id, id);
  return json({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active });
});
