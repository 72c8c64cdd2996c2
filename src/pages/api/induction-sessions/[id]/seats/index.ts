import { z } from '@lib/zod';
import { idParam, json, readJson, requireSignedIn, route } from '@lib/server/http';
import { bookSeat } from '@lib/server/induction-sessions/seats';

const body = z.object({}).strict();

/** POST /api/induction-sessions/:id/seats {} → 201 { seatId }; 409 session_full; 403 not_eligible with the reason. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const id = idParam(params.id, 'induction session');
  await readJson(request, body);
  const r = await bookSeat(person.id, id);
  return json({ seatId: r.seatId, session: r.session }, 201);
});
