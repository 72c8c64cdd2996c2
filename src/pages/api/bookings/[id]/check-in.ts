import { json, readJson, requireSignedIn, route, idParam } from '@lib/server/http';
import { checkIn } from '@lib/server/machine-sessions';

import { checkInBody } from '@lib/session-schemas';

/**
 * POST /api/bookings/:id/check-in {checklist: {extractionOn, airAssistOn, lensClean, extinguisherInPlace, willStay}, coolantC}
 * → 200 the session. 403 not_your_booking / clearance_required; 409 too_early / booking_ended / machine_out_of_service /
 * machine_in_use; 422 checklist_incomplete / coolant_out_of_range.
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const id = idParam(params.id, 'booking');
  const input = await readJson(request, checkInBody);
  return json(await checkIn(person, id, { checklist: input.checklist, coolantC: input.coolantC ?? null }));
});
