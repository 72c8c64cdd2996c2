import { idParam, json, requireSignedIn, route } from '../../../../lib/server/http';
import { startAttempt } from '../../../../lib/server/quizzes';

/**
 * POST /api/quizzes/:id/attempt (no body) → 201 a new attempt on the published version: questions drawn and
 * shuffled, without the answers. 429 attempt_limit (fields.nextAllowedAt) when the limits say wait. A POST, since
 * it writes an attempt and counts against the day's limit.
 */
export const POST = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  return json(await startAttempt(person.id, idParam(params.id, 'quiz')), 201);
});
