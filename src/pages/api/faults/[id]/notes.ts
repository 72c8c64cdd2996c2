import { z } from 'zod';
import { HttpError, json, readJson, requireRole, route } from '../../../../lib/server/http';
import { addFaultNote } from '../../../../lib/server/faults/triage';
import { faultJson } from '../../../../lib/server/fault-json';
import { faultNoteText } from '../../../../lib/faults-shared';
import { uuid } from '../../../../lib/schemas';

const body = z.object({ body: faultNoteText }).strict();

/** POST /api/faults/:id/notes { body } (steward, admin) → the fault with the note added. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such fault.');
  const input = await readJson(request, body);
  return json(faultJson(await addFaultNote(person, id.data, input.body)));
});
