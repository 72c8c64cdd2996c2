import { HttpError, json, requireRole, route } from '../../../../lib/server/http';
import { reactivatePerson } from '../../../../lib/server/people';
import { uuid } from '../../../../lib/schemas';

/** POST /api/people/:id/reactivate (admin) → the person, active again (they may sign in). Audited. */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'person_not_found', 'No person has that id.');
  const p = await reactivatePerson(admin.id, id.data);
  return json({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active });
});
