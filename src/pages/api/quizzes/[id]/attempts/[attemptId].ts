import { z } from '@lib/zod';
import { idParam, json, readJson, requireSignedIn, route } from '@lib/server/http';
import { saveAnswers, submitAttempt } from '@lib/server/quizzes';

const body = z
  .object({
    answers: z.record(z.string().min(1).max(40), z.array(z.string().min(1).max(40)).max(8)).refine((a) => Object.keys(a).length <= 100, 'At most 100 answers.'),
  })
  .strict();

/** POST /api/quizzes/:id/attempts/:attemptId { answers: { questionId: [optionId…] } } → score, passed, missed topics. */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const quizId = idParam(params.id, 'quiz');
  const attemptId = idParam(params.attemptId, 'attempt');
  const input = await readJson(request, body);
  return json(await submitAttempt(person.id, quizId, attemptId, input.answers));
});

/** PATCH /api/quizzes/:id/attempts/:attemptId { answers } → the answers of the open attempt saved as they are picked. */
export const PATCH = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const quizId = idParam(params.id, 'quiz');
  const attemptId = idParam(params.attemptId, 'attempt');
  const input = await readJson(request, body);
  return json(await saveAnswers(person.id, quizId, attemptId, input.answers));
});
