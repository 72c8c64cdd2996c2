import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { saveCard } from '@lib/server/payments/cards';

const body = z.object({ token: z.string().trim().regex(/^tok_[A-Za-z0-9_]{1,100}$/, 'Not a card token (tok_…).') }).strict();

/**
 * POST /api/account/card {token} (signed in) → {card: {brand, last4}, settled}: saves the card (a provider
 * token; in test mode the provider's documented test tokens) and retries any failed payment on it.
 */
export const POST = route(async ({ locals, request }) => {
  const person = requireSignedIn(locals);
  const { token } = await readJson(request, body);
  return json(await saveCard(person.id, token), 201);
});
