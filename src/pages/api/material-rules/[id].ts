import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { updateMaterial } from '@lib/server/materials';
import { materialInput } from '@lib/material-schemas';


/** PUT /api/material-rules/:id (admin) {every field} → the material; the change is audited with before and after. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const id = idParam(params.id, 'material');
  const input = await readJson(request, materialInput);
  return json(await updateMaterial(admin.id, id, input));
});
