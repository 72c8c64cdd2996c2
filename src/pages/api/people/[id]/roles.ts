import { z } from '@lib/zod';
import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { setRoles } from '@lib/server/people';
import { role } from '@lib/schemas';

const body = z.object({ roles: z.array(role).max(4) }).strict();

/** PUT /api/people/:id/roles {roles} (admin) → the person with the new roles; each change audited. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const id = idParam(params.id, 'person');
  const { roles } = await readJson(request, body);
  const person = await setRoles(admin.id, id, roles);
  return json({ id: person.id, email: person.email, name: person.name, roles: person.roles, active: person.active });
});
