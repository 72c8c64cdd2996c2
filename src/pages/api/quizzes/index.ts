import { z } from '@lib/zod';
import { json, readJson, requireRole, route } from '@lib/server/http';
import { createQuiz, listQuizzes } from '@lib/server/quizzes';
import { quizDraftSchema } from '@lib/quiz-rules';
import { uuid } from '@lib/schemas';

/** GET /api/quizzes (instructor) → every quiz with its published and draft versions. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'instructor');
  return json({ quizzes: await listQuizzes() });
});

const body = z.object({ groupId: uuid, draft: quizDraftSchema }).strict();

/** POST /api/quizzes (instructor) { groupId, draft } → a new quiz with draft version 1. */
export const POST = route(async ({ locals, request }) => {
  const person = requireRole(locals, 'instructor');
  const input = await readJson(request, body);
  return json(await createQuiz(person.id, input.groupId, input.draft), 201);
});
