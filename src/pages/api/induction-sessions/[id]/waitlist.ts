import { z } from '@lib/zod';
import { idParam, json, readJson, requireSignedIn, route } from '@lib/server/http';
import { joinSessionWaitlist } from '@lib/server/induction-sessions/seats';

const body = z.object({}).strict();

/** POST /api/induction-sessions/:id/waitlist {} → 201 { waitlistId, position }: a freed seat is given to the first waiting, by e-mail. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const id = idParam(params.id, 'induction session');
  await readJson(request, body);
  return json(await joinSessionWaitlist(person.id, id), 201);
});
