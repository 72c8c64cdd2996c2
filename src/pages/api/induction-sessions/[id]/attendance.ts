import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { markAttendance } from '@lib/server/induction-sessions/roster';
import { attendanceInput } from '@lib/induction';

/** POST /api/induction-sessions/:id/attendance (instructor) { personId, present } → the seat present, or absent (released, person told). */
export const POST = route(async ({ locals, params, request }) => {
  const instructor = requireRole(locals, 'instructor');
  const id = idParam(params.id, 'induction session');
  const input = await readJson(request, attendanceInput);
  return json(await markAttendance(instructor.id, id, input.personId, input.present));
});
