import { z } from '@lib/zod';
import { json, readJson, route } from '@lib/server/http';
import { clientAddressOf } from '@lib/server/client-address';
import { countRequest } from '@lib/server/request-limits';
import { requestPasswordReset } from '@lib/server/accounts';
import { email } from '@lib/schemas';

const body = z.object({ email }).strict();

/** POST /api/account/password-reset {email} → 202 whatever the address (a link is e-mailed when it has an account); 429 when asked too often. */
export const POST = route(async (ctx) => {
  const input = await readJson(ctx.request, body);
  await countRequest('reset', input.email, clientAddressOf(ctx));
  await requestPasswordReset(input.email);
  return json({ ok: true, message: 'If that address has an account, a link to choose a new password is on its way.' }, 202);
});
