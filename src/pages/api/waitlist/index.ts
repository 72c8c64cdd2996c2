import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { joinWaitlist } from '@lib/server/bookings/waitlist';
import { endsAfterStart, endsAfterStartMessage, isoInstant, uuid } from '@lib/schemas';

const body = z.object({ machineId: uuid, startsAt: isoInstant, endsAt: isoInstant }).strict().refine(endsAfterStart, endsAfterStartMessage);

/** POST /api/waitlist → 201: you are told by e-mail when that range frees up (first come, first offered). */
export const POST = route(async ({ locals, request }) => {
  const person = requireSignedIn(locals);
  const input = await readJson(request, body);
  return json(await joinWaitlist(person, input), 201);
});
