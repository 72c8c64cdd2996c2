import { z } from '@lib/zod';
import { json, readQuery, requireSignedIn, route, idParam } from '@lib/server/http';
import { machineAvailability } from '@lib/server/bookings/week-view';
import { isoInstant } from '@lib/schemas';

const query = z
  .object({ from: isoInstant, to: isoInstant })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to > q.from, { path: ['to'], message: '`to` must be after `from`.' })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to.getTime() - q.from.getTime() <= 42 * 86_400_000, { path: ['to'], message: 'Ask for at most 42 days at a time.' });

/** GET /api/machines/:id/availability?from=&to= → free ranges by the machine's booking rules. */
export const GET = route(async ({ locals, params, url }) => {
  requireSignedIn(locals);
  const id = idParam(params.id, 'machine');
  const q = readQuery(url, query);
  return json(await machineAvailability(id, q.from, q.to));
});
