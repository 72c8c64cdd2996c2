import { z } from 'zod';
import { HttpError, json, readJson, requireRole, route } from '../../../../lib/server/http';
import { clearStewardFlag } from '../../../../lib/server/machine-sessions';
import { uuid } from '../../../../lib/schemas';

const body = z.object({ note: z.string().trim().max(1000).default('') }).strict();

/** POST /api/sessions/:id/review {note} (steward, admin) → the session, no longer flagged `needs_steward`. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such session.');
  const { note } = await readJson(request, body);
  return json(await clearStewardFlag(person, id.data, note));
});
