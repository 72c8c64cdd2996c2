import { idParam, json, requireRole, route } from '@lib/server/http';
import { roster } from '@lib/server/induction-sessions/roster';

/** GET /api/induction-sessions/:id/roster (instructor) → the session, its checklist, and each seat with quiz result, attendance and sign-off. */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'instructor');
  return json(await roster(idParam(params.id, 'induction session')));
});
