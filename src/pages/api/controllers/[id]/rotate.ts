import { idParam, json, requireRole, route } from '@lib/server/http';
import { rotateToken } from '@lib/server/controllers/registry';

/** POST /api/controllers/:id/rotate (admin) → 200 {id, token}: a new token, shown once; the old one stops working. */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  return json(await rotateToken(admin.id, idParam(params.id, 'controller')));
});
