import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { claimWaitlist } from '@lib/server/bookings/waitlist';

const body = z.object({ token: z.string().min(20).max(64) }).strict();

/** POST /api/waitlist/claim → 201 with the booking made from a held offer. */
export const POST = route(async ({ locals, request }) => {
  const person = requireSignedIn(locals);
  const input = await readJson(request, body);
  return json(await claimWaitlist(person, input.token), 201);
});
