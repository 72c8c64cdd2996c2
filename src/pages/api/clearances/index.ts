import { z } from '@lib/zod';
import { json, readQuery, requireRole, route } from '@lib/server/http';
import { listClearances } from '@lib/server/clearances/lists';
import { searchText, uuid } from '@lib/schemas';

const query = z.object({ q: searchText, groupId: uuid.optional() });

/** GET /api/clearances?q=&groupId= (instructor) → clearances by person, for suspending and reinstating. */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'instructor');
  const f = readQuery(url, query);
  return json({ clearances: await listClearances({ q: f.q || undefined, groupId: f.groupId }) });
});
