import { z } from '@lib/zod';
import { json, jsonWithEtag, readJson, readQuery, requireSignedIn, route } from '@lib/server/http';
import { calendarFeed } from '@lib/server/bookings/week-view';
import { createBooking } from '@lib/server/bookings/create';
import { holdAtBooking } from '@lib/server/payments/hold-at-booking';
import { bookingNotes, endsAfterStart, endsAfterStartMessage, isoInstant, materialDeclaration, uuid } from '@lib/schemas';

const feedQuery = z
  .object({ machineId: uuid.optional(), from: isoInstant, to: isoInstant })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to > q.from, { path: ['to'], message: '`to` must be after `from`.' })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to.getTime() - q.from.getTime() <= 42 * 86_400_000, { path: ['to'], message: 'Ask for at most 42 days at a time.' });

/**
 * GET /api/bookings?machineId=&from=&to= → the calendar feed of the signed-in person's view. Its ETag is a hash of
 * the answer: a browser asking again with If-None-Match gets 304 and no body when nothing in it changed.
 */
export const GET = route(async ({ locals, url, request }) => {
  const person = requireSignedIn(locals);
  const q = readQuery(url, feedQuery);
  return jsonWithEtag(request, await calendarFeed(person, q));
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

/**
 * POST /api/bookings → 201 with the booking, `payment` ({state: held | hold pending | none}) and `paymentNotice`.
 * A failed payment on the account refuses it (402) before any rule is checked (an unknown machine answers 404). The card hold is recorded with the booking and placed by
 * the worker; this request tries it once at once when a card is saved, so a member usually sees "held" straight away.
 */
export const POST = route(async ({ locals, request }) => {
  const person = requireSignedIn(locals);
  const input = await readJson(request, createBody);
  const { booking, holdFacts } = await createBooking(person, input);
  const hold = await holdAtBooking({ id: booking.id, personId: person.id }, holdFacts);
  return json({ ...booking, payment: { state: hold.state }, paymentNotice: hold.notice }, 201);
});
