import { z } from '@lib/zod';
import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { clearStewardFlag } from '@lib/server/machine-sessions';


const body = z.object({ note: z.string().trim().max(1000).default('') }).strict();

/** POST /api/sessions/:id/review {note} (steward, admin) → the session, no longer flagged `needs_steward`. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'session');
  const { note } = await readJson(request, body);
  return json(await clearStewardFlag(person, id, note));
});
