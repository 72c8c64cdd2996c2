import { HttpError, json, readJson, requireRole, route } from '../../../lib/server/http';
import { updateMaterial } from '../../../lib/server/materials';
import { materialInput } from '../../../lib/material-schemas';
import { uuid } from '../../../lib/schemas';

/** PUT /api/material-rules/:id (admin) {every field} → the material; the change is audited with before and after. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'material_not_found', 'No material has that id.');
  const input = await readJson(request, materialInput);
  return json(await updateMaterial(admin.id, id.data, input));
});
