import { idParam, json, requireRole, route } from '@lib/server/http';
import { revokeController } from '@lib/server/controllers/registry';

/** POST /api/controllers/:id/revoke (admin) → 200 {id, revokedAt}: its token answers 401 from now on. */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const c = await revokeController(admin.id, idParam(params.id, 'controller'));
  return json({ id: c.id, revokedAt: c.revokedAt });
});
