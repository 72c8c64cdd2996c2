import { json, requireSignedIn, route, idParam } from '@lib/server/http';
import { cancelBooking } from '@lib/server/bookings/cancel';

import { tryIntentNow } from '@lib/server/payments/intents';
import { cancellationIntent } from '@lib/server/payment-intents';

/** POST /api/bookings/:id/cancel → the cancelled booking (lateCancel true after the cut-off). */
export const POST = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  const id = idParam(params.id, 'booking');
  const booking = await cancelBooking(person, id);
  // the fee or the release was recorded with the cancellation; tried once now, else the worker does it
  await tryIntentNow(cancellationIntent(booking, person.id));
  return json(booking);
});
