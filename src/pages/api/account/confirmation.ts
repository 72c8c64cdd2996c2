import { z } from '@lib/zod';
import { json, readJson, route } from '@lib/server/http';
import { clientAddressOf } from '@lib/server/client-address';
import { countRequest } from '@lib/server/request-limits';
import { resendConfirmation } from '@lib/server/accounts';
import { email } from '@lib/schemas';

const body = z.object({ email }).strict();

/** POST /api/account/confirmation {email} → 202 whatever the address (a new link when it has an unconfirmed account); 429 when asked too often. */
export const POST = route(async (ctx) => {
  const input = await readJson(ctx.request, body);
  await countRequest('resend', input.email, clientAddressOf(ctx));
  await resendConfirmation(input.email);
  return json({ ok: true, message: 'If that address has an account waiting for confirmation, a new link is on its way.' }, 202);
});
