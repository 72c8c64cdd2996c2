import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { discardDraft, saveDraft } from '@lib/server/quizzes';
import { quizDraftSchema } from '@lib/quiz-rules';

/** PUT /api/quizzes/:id/draft (instructor) → saves the open draft, or starts a new draft version after the published one. */
export const PUT = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'instructor');
  const id = idParam(params.id, 'quiz');
  const draft = await readJson(request, quizDraftSchema);
  return json(await saveDraft(person.id, id, draft));
});

/** DELETE /api/quizzes/:id/draft (instructor) → the open draft is thrown away; the published version stays. */
export const DELETE = route(async ({ locals, params }) => {
  const person = requireRole(locals, 'instructor');
  return json(await discardDraft(person.id, idParam(params.id, 'quiz')));
});
