import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { signOffFromRoster } from '@lib/server/induction-sessions/roster';
import { rosterSignoffInput } from '@lib/induction';

/**
 * POST /api/induction-sessions/:id/signoffs (instructor) { personId, present, checklist: { item: true… }, level, notes }
 * → 201 the sign-off (the person's clearance becomes `cleared`); with present: false → 200, the seat marked absent.
 */
export const POST = route(async ({ locals, params, request }) => {
  const instructor = requireRole(locals, 'instructor');
  const id = idParam(params.id, 'induction session');
  const input = await readJson(request, rosterSignoffInput);
  const r = await signOffFromRoster(instructor.id, id, input);
  return json(r, r.signedOff ? 201 : 200);
});
