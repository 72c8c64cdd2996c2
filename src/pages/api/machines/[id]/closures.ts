import { z } from '@lib/zod';
import { json, readJson, readQuery, requireRole, requireSignedIn, route, DomainError } from '@lib/server/http';
import { addClosure, listClosures } from '@lib/server/booking-rules';
import { isoInstant, uuid } from '@lib/schemas';

const body = z
  .object({ startsAt: isoInstant, endsAt: isoInstant, reason: z.string().trim().min(1, 'Give a reason people will see.').max(200) })
  .strict()
  .refine((v) => v.endsAt > v.startsAt, { path: ['endsAt'], message: 'The end must be after the start.' });
const query = z.object({ from: isoInstant, to: isoInstant });

function machineId(raw: string | undefined): string {
  const id = uuid.safeParse(raw);
  if (!id.success) throw new DomainError('not_found', 'not_found', 'No such machine.');
  return id.data;
}

/** GET /api/machines/:id/closures?from=&to= → closures of the machine (and site-wide ones). */
export const GET = route(async ({ locals, params, url }) => {
  requireSignedIn(locals);
  const q = readQuery(url, query);
  return json(await listClosures(machineId(params.id), q.from, q.to));
});

/** POST /api/machines/:id/closures → 201 with the closure (admin). */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin');
  const id = machineId(params.id);
  const input = await readJson(request, body);
  return json(await addClosure(person.id, { machineId: id, ...input }), 201);
});
