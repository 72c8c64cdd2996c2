import { idParam, json, requireSignedIn, route } from '@lib/server/http';
import { cancelMySeat } from '@lib/server/induction-sessions/seats';

/** DELETE /api/induction-sessions/:id/seats/mine → 200: the seat (or the place on the waitlist) is given up. */
export const DELETE = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  const r = await cancelMySeat(person.id, idParam(params.id, 'induction session'));
  return json({ seatId: r.seatId, state: r.state });
});
