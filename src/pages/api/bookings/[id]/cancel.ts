import { json, requireSignedIn, route, HttpError } from '../../../../lib/server/http';
import { cancelBooking } from '../../../../lib/server/bookings';
import { uuid } from '../../../../lib/schemas';

/** POST /api/bookings/:id/cancel → the cancelled booking (lateCancel true after the cut-off). */
export const POST = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such booking.');
  return json(await cancelBooking(person, id.data));
});
