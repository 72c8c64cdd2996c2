import { json, readJson, requireRole, route } from '@lib/server/http';
import { setWalkUpsAllowed } from '@lib/server/controllers/registry';
import { walkUpsBody } from '@lib/controller-schemas';

/** PUT /api/controllers/walk-ups {mode: 'bookings_only' | 'walk_ups_allowed'} (admin) → 200 {mode}. */
export const PUT = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, walkUpsBody);
  const allowed = await setWalkUpsAllowed(admin.id, input.mode === 'walk_ups_allowed');
  return json({ mode: allowed ? 'walk_ups_allowed' : 'bookings_only' });
});
