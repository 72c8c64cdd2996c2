import { json, readJson, requireRole, route } from '@lib/server/http';
import { setMachineStatus } from '@lib/server/faults/machine-status';
import { statusBody } from '@lib/faults-shared';

/**
 * POST /api/machines/:idOrCode/status { status, reason, checklist? } (steward, admin) → 200 { machineId, status, bumpedBookings }.
 * Back into service from out of service: 409 open_stop_fault (naming it) while a stop fault on the machine is open;
 * then every check confirmed (422 checklist_incomplete); 409 status_unchanged.
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const input = await readJson(request, statusBody);
  return json(await setMachineStatus(person, params.id ?? '', input));
});
