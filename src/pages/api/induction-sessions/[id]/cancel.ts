import { z } from '@lib/zod';
import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { cancelSession } from '@lib/server/induction-sessions/publishing';

const body = z.object({ reason: z.string().trim().min(3, 'Say why, in a few words.').max(500, 'Use at most 500 characters.') }).strict();

/** POST /api/induction-sessions/:id/cancel (instructor, admin) { reason } → the session cancelled, seats cancelled and people e-mailed. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'instructor', 'admin');
  const id = idParam(params.id, 'induction session');
  const input = await readJson(request, body);
  return json(await cancelSession(person.id, id, input.reason));
});
