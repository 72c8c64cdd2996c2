import { json, requireSignedIn, route } from '@lib/server/http';
import { accountSummary } from '@lib/server/payments/account';

/** GET /api/account (signed in) → tier, cost centre, saved card (brand, last4), balance owed. */
export const GET = route(async ({ locals }) => {
  const person = requireSignedIn(locals);
  return json(await accountSummary(person.id));
});
