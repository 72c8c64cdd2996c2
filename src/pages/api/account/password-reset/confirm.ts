import { z } from '@lib/zod';
import { json, readJson, route } from '@lib/server/http';
import { completePasswordLink } from '@lib/server/accounts';
import { startSession } from '@lib/server/auth-forms';

const body = z.object({ token: z.string().min(10).max(200), password: z.string().min(1).max(1000) }).strict();

/**
 * POST /api/account/password-reset/confirm {token, password} → 200 and a new session (the link proves control of
 * the address); every other session ends. 410 `token_expired` / `token_used`, 404 `token_unknown`, 422 weak password.
 */
export const POST = route(async (ctx) => {
  const input = await readJson(ctx.request, body);
  const person = await completePasswordLink(input.token, input.password);
  await startSession(ctx, person);
  return json({ ok: true });
});
