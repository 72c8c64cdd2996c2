import { z } from '@lib/zod';
import { json, readQuery, requireRole, route } from '@lib/server/http';
import { findPeople } from '@lib/server/badges';

const query = z.object({ q: z.string().trim().min(2, 'Type at least 2 characters.').max(100) }).strict();

/** GET /api/badges/people?q= (steward, admin) → up to 20 people whose name or e-mail contains q, with their badge count. */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'steward', 'admin');
  return json(await findPeople(readQuery(url, query).q));
});
