import { idParam, json, requireRole, route } from '@lib/server/http';
import { getQuizForEditor } from '@lib/server/quizzes';

/** GET /api/quizzes/:id (instructor) → the quiz for its editor (the open draft, else the published version) and its history. */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'instructor');
  return json(await getQuizForEditor(idParam(params.id, 'quiz')));
});
