import { idParam, json, requireSignedIn, route } from '../../../../lib/server/http';
import { startAttempt } from '../../../../lib/server/quizzes';

/**
 * GET /api/quizzes/:id/attempt → starts an attempt on the published version: questions drawn and
 * shuffled, without the answers. 429 attempt_limit (fields.nextAllowedAt) when the limits say wait.
 */
export const GET = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  return json(await startAttempt(person.id, idParam(params.id, 'quiz')), 201);
});
