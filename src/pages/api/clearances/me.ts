import { json, requireSignedIn, route } from '@lib/server/http';
import { listMyClearances } from '@lib/server/clearances/groups';

/** GET /api/clearances/me → the signed-in person's clearance for each machine group: state, level, expiry, next step. */
export const GET = route(async ({ locals }) => {
  const person = requireSignedIn(locals);
  return json({ clearances: await listMyClearances(person.id, new Date()) });
});
