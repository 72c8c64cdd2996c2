import { z } from '@lib/zod';
import { json, readJson, readQuery, requireRole, route } from '@lib/server/http';
import { signOff } from '@lib/server/clearances/transitions';
import { signoffQueue } from '@lib/server/clearances/lists';
import { uuid } from '@lib/schemas';
import { LEVELS } from '@lib/clearance-rules';

const query = z.object({ groupId: uuid.optional() });

/** GET /api/signoffs?groupId= (instructor) → people awaiting a practical sign-off, oldest quiz pass first. */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'instructor');
  const f = readQuery(url, query);
  return json({ queue: await signoffQueue(f.groupId) });
});

const body = z
  .object({
    personId: uuid,
    groupId: uuid,
    checklist: z.array(z.object({ item: z.string().trim().min(1).max(200), done: z.boolean() }).strict()).max(50),
    notes: z.string().trim().max(2000, 'Use at most 2000 characters.').default(''),
    level: z.enum(LEVELS).default('basic'),
  })
  .strict();

/** POST /api/signoffs (instructor) { personId, groupId, checklist, notes, level? } → the person is cleared. */
export const POST = route(async ({ locals, request }) => {
  const instructor = requireRole(locals, 'instructor');
  const input = await readJson(request, body);
  return json(await signOff(instructor.id, input), 201);
});
