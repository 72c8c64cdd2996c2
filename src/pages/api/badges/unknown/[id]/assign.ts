import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { assignUnknownBadge } from '@lib/server/badges';
import { assignUnknownBody } from '@lib/controller-schemas';

/** POST /api/badges/unknown/:id/assign {personId} (steward, admin) → 201 the badge, now the person's. */
export const POST = route(async ({ locals, params, request }) => {
  const actor = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'unknown badge');
  const input = await readJson(request, assignUnknownBody);
  const b = await assignUnknownBadge(actor.id, id, input.personId);
  return json({ id: b.id, lastFour: b.lastFour, createdAt: b.createdAt.toISOString() }, 201);
});
