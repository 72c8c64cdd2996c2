import { idParam, json, requireRole, route } from '@lib/server/http';
import { publish } from '@lib/server/quizzes';

/** POST /api/quizzes/:id/publish (instructor) → the draft becomes the published, frozen version. */
export const POST = route(async ({ locals, params }) => {
  const person = requireRole(locals, 'instructor');
  return json(await publish(person.id, idParam(params.id, 'quiz')));
});
