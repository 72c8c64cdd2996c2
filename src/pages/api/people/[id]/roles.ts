import { z } from 'zod';
import { HttpError, json, readJson, requireRole, route } from '../../../../lib/server/http';
import { setRoles } from '../../../../lib/server/people';
import { role, uuid } from '../../../../lib/schemas';

const body = z.object({ roles: z.array(role).max(4) }).strict();

/** PUT /api/people/:id/roles {roles} (admin) → the person with the new roles; each change audited. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'person_not_found', 'No person has that id.');
  const { roles } = await readJson(request, body);
  const person = await setRoles(admin.id, id.data, roles);
  return json({ id: person.id, email: person.email, name: person.name, roles: person.roles, active: person.active });
});
