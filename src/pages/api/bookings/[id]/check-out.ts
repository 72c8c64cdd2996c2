import { json, readJson, requireSignedIn, route, idParam } from '@lib/server/http';
import { checkOut } from '@lib/server/machine-sessions';

import { checkOutBody } from '@lib/session-schemas';

/**
 * POST /api/bookings/:id/check-out {jobTimerMinutes?, materials: [{sku, quantity}], leftCleanAndClear}
 * (the booking's owner, or a steward or admin) → 200 {session, charge, chargeProblem}. 409 not_checked_in;
 * 422 checklist_incomplete / unknown_material.
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const id = idParam(params.id, 'booking');
  const input = await readJson(request, checkOutBody);
  return json(
    await checkOut(person, id, { jobTimerMinutes: input.jobTimerMinutes ?? null, materials: input.materials, checkout: { leftCleanAndClear: input.leftCleanAndClear } }),
  );
});
