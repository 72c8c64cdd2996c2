import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { closeAccount } from '@lib/server/accounts';
import { endSession } from '@lib/server/auth-forms';

const body = z.object({ confirm: z.literal(true, { error: 'Tick the box to confirm.' }), password: z.string().min(1).max(1000) }).strict();

/**
 * POST /api/account/close {confirm: true, password} (signed in) → 200: future bookings cancelled, the account
 * anonymised and signed out everywhere. The password is checked first (403 `wrong_password`).
 */
export const POST = route(async (ctx) => {
  const me = requireSignedIn(ctx.locals);
  const input = await readJson(ctx.request, body);
  await closeAccount(me.id, input.password);
  endSession(ctx);
  return json({ ok: true });
});
