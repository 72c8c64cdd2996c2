import { z } from '@lib/zod';
import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { reinstate } from '@lib/server/clearances/transitions';

const body = z.object({ reason: z.string().trim().min(3, 'Give the reason (at least 3 characters).').max(500, 'Use at most 500 characters.') }).strict();

/** POST /api/clearances/:id/reinstate (instructor) { reason } → the clearance returns to the state it held before (audited, e-mailed). */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'instructor');
  const id = idParam(params.id, 'clearance');
  const input = await readJson(request, body);
  return json(await reinstate(person.id, id, input.reason));
});
