import { z } from 'zod';
import { json, readQuery, requireSignedIn, route, HttpError } from '../../../../lib/server/http';
import { machineAvailability } from '../../../../lib/server/bookings/week-view';
import { isoInstant, uuid } from '../../../../lib/schemas';

const query = z
  .object({ from: isoInstant, to: isoInstant })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to > q.from, { path: ['to'], message: '`to` must be after `from`.' })
  .refine((q) => !(q.to instanceof Date && q.from instanceof Date) || q.to.getTime() - q.from.getTime() <= 42 * 86_400_000, { path: ['to'], message: 'Ask for at most 42 days at a time.' });

/** GET /api/machines/:id/availability?from=&to= → free ranges by the machine's booking rules. */
export const GET = route(async ({ locals, params, url }) => {
  requireSignedIn(locals);
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such machine.');
  const q = readQuery(url, query);
  return json(await machineAvailability(id.data, q.from, q.to));
});
