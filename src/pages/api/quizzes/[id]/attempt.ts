import { idParam, json, requireSignedIn, route } from '@lib/server/http';
import { startAttempt } from '@lib/server/quizzes';

/**
 * POST /api/quizzes/:id/attempt (no body) → 201 a new attempt on the published version: questions drawn and
 * shuffled, without the answers; or 200 the attempt still open (same id, same questions, the answers saved so far),
 * which does not count again. 429 attempt_limit (fields.nextAllowedAt) when the limits say wait. A POST, since
 * it may write an attempt that counts against the day's limit.
 */
export const POST = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  const attempt = await startAttempt(person.id, idParam(params.id, 'quiz'));
  return json(attempt, attempt.resumed ? 200 : 201);
});
