import { json, readJson, requireRole, route } from '../../../lib/server/http';
import { setWalkUpsAllowed } from '../../../lib/server/controllers';
import { walkUpsBody } from '../../../lib/controller-schemas';

/** PUT /api/controllers/walk-ups {walkUpsAllowed} (admin) → 200 {walkUpsAllowed}. */
export const PUT = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, walkUpsBody);
  return json({ walkUpsAllowed: await setWalkUpsAllowed(admin.id, input.walkUpsAllowed) });
});
