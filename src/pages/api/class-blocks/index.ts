import { z } from '@lib/zod';
import { json, readJson, requireRole, route } from '@lib/server/http';
import { createClassBlock } from '@lib/server/bookings/class-blocks';
import { bookingNotes, email, endsAfterStart, endsAfterStartMessage, isoInstant, uuid } from '@lib/schemas';

const body = z.object({
  startsAt: isoInstant,
  endsAt: isoInstant,
  machineId: uuid,
  courseName: z.string().trim().min(1, 'Name the course.').max(120, 'Use at most 120 characters.'),
  studentEmails: z.array(email).max(60, 'At most 60 students in a block.').default([]),
  notes: bookingNotes,
})
  .strict()
  .refine(endsAfterStart, endsAfterStartMessage);

/** POST /api/class-blocks → 201 with the block and its supervised students (instructor). */
export const POST = route(async ({ locals, request }) => {
  const person = requireRole(locals, 'instructor');
  const input = await readJson(request, body);
  return json(await createClassBlock(person, input), 201);
});
