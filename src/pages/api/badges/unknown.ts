import { json, requireRole, route } from '@lib/server/http';
import { recentUnknownBadges } from '@lib/server/badges';

/** GET /api/badges/unknown (steward, admin) → badges controllers read in the last hour that nobody holds. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'steward', 'admin');
  return json((await recentUnknownBadges()).map((u) => ({ ...u, seenAt: u.seenAt.toISOString() })));
});
