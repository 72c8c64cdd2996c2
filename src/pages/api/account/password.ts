import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { changePassword } from '@lib/server/accounts';
import { startSession } from '@lib/server/auth-forms';

const body = z.object({ current: z.string().min(1).max(1000), password: z.string().min(1).max(1000) }).strict();

/** POST /api/account/password {current, password} (signed in) → 200; 403 `wrong_password`; other sessions end, this one goes on. */
export const POST = route(async (ctx) => {
  const me = requireSignedIn(ctx.locals);
  const input = await readJson(ctx.request, body);
  const person = await changePassword(me.id, input.current, input.password);
  await startSession(ctx, person);
  return json({ ok: true });
});
