import { z } from 'zod';
import { json, readJson, readQuery, requireSignedIn, route } from '../../../lib/server/http';
import { calendarFeed, createBooking } from '../../../lib/server/bookings';
import { bookingNotes, endsAfterStart, endsAfterStartMessage, isoInstant, materialDeclaration, uuid } from '../../../lib/schemas';

const feedQuery = z
  .object({ machineId: uuid.optional(), from: isoInstant, to: isoInstant })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to > q.from, { path: ['to'], message: '`to` must be after `from`.' })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to.getTime() - q.from.getTime() <= 42 * 86_400_000, { path: ['to'], message: 'Ask for at most 42 days at a time.' });

/** GET /api/bookings?machineId=&from=&to= → the calendar feed of the signed-in person's view. */
export const GET = route(async ({ locals, url }) => {
  const person = requireSignedIn(locals);
  const q = readQuery(url, feedQuery);
  return json(await calendarFeed(person, q));
});

const createBody = z.object({
  startsAt: isoInstant,
  endsAt: isoInstant,
  machineId: uuid,
  materials: z.array(materialDeclaration).max(20, 'At most 20 materials per booking.').default([]),
  notes: bookingNotes,
})
  .strict()
  .refine(endsAfterStart, endsAfterStartMessage);

/** POST /api/bookings → 201 with the booking. */
export const POST = route(async ({ locals, request }) => {
  const person = requireSignedIn(locals);
  const input = await readJson(request, createBody);
  return json(await createBooking(person, input), 201);
});
