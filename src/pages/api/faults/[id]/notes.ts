import { z } from '@lib/zod';
import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { addFaultNote } from '@lib/server/faults/triage';
import { faultJson } from '@lib/server/fault-json';
import { faultNoteText } from '@lib/faults-shared';


const body = z.object({ body: faultNoteText }).strict();

/** POST /api/faults/:id/notes { body } (steward, admin) → the fault with the note added. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'fault');
  const input = await readJson(request, body);
  return json(faultJson(await addFaultNote(person, id, input.body)));
});
