import { z } from '@lib/zod';
import { json, readJson, readQuery, requireRole, requireSignedIn, route } from '@lib/server/http';
import { createSession } from '@lib/server/induction-sessions/publishing';
import { listSessions } from '@lib/server/induction-sessions/records';
import { sessionInput } from '@lib/induction';
import { isoInstant, uuid } from '@lib/schemas';

const query = z.object({ groupId: uuid.optional(), from: isoInstant.optional(), to: isoInstant.optional() });

/** GET /api/induction-sessions?groupId=&from=&to= (signed in) → published sessions with seats taken, soonest first. */
export const GET = route(async ({ locals, url }) => {
  requireSignedIn(locals);
  const f = readQuery(url, query);
  const sessions = await listSessions({ groupId: f.groupId, from: f.from, to: f.to });
  return json(sessions.map((s) => ({
    id: s.id, groupId: s.groupId, groupName: s.groupName, startsAt: s.startsAt, endsAt: s.endsAt, capacity: s.capacity,
    seatsTaken: s.seatsTaken, kind: s.kind, place: s.place, machineId: s.machineId, bring: s.bring, instructorName: s.instructorName,
  })));
});

/** POST /api/induction-sessions (instructor, admin) → 201 the published session; at a machine, its time becomes a class block. */
export const POST = route(async ({ locals, request }) => {
  const person = requireRole(locals, 'instructor', 'admin');
  const input = await readJson(request, sessionInput);
  return json(await createSession(person.id, input), 201);
});
