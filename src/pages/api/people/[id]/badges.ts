import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { enrolBadge, listBadges } from '@lib/server/badges';
import { enrolBadgeBody } from '@lib/controller-schemas';

const toJson = (b: { id: string; lastFour: string; createdAt: Date; createdByName: string | null }) => ({ id: b.id, lastFour: b.lastFour, createdAt: b.createdAt.toISOString(), createdByName: b.createdByName });

/** GET /api/people/:id/badges (steward, admin) → the person's badges (last four characters only). */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'steward', 'admin');
  return json((await listBadges(idParam(params.id, 'person'))).map(toJson));
});

/** POST /api/people/:id/badges {badge} (steward, admin) → 201 {id, lastFour, …}; 409 badge_taken. */
export const POST = route(async ({ locals, params, request }) => {
  const actor = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'person');
  const input = await readJson(request, enrolBadgeBody);
  return json(toJson(await enrolBadge(actor.id, id, input.badge)), 201);
});
