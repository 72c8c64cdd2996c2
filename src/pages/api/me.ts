import { json, requireSignedIn, route } from '@lib/server/http';

/** GET /api/me → the signed-in person and their roles; 401 when signed out. */
export const GET = route(({ locals }) => {
  const person = requireSignedIn(locals);
  return json({ id: person.id, email: person.email, name: person.name, roles: person.roles });
});
