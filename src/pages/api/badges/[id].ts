import { idParam, json, requireRole, route } from '@lib/server/http';
import { removeBadge } from '@lib/server/badges';

/** DELETE /api/badges/:id (steward, admin) → 200 {removed: true}. */
export const DELETE = route(async ({ locals, params }) => {
  const actor = requireRole(locals, 'steward', 'admin');
  await removeBadge(actor.id, idParam(params.id, 'badge'));
  return json({ removed: true });
});
