import { z } from '@lib/zod';
import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { retireMachine } from '@lib/server/cascades/retire-machine';

const body = z.object({ reason: z.string().trim().min(3, 'Say why the machine is retired (the people whose bookings are cancelled read it).').max(500, 'Use at most 500 characters.') }).strict();

/**
 * POST /api/machines/:id/retire → {machine, cancelledBookings, closedFaults}: the retired machine, how many bookings were
 * cancelled and how many open faults were closed (admin; audited).
 * 409 `machine_in_use` while someone is checked in; 409 `machine_retired` the second time.
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin');
  const id = idParam(params.id, 'machine');
  const { reason } = await readJson(request, body);
  return json(await retireMachine(person.id, id, reason));
});
