import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { resolveFault } from '@lib/server/faults/triage';
import { faultJson } from '@lib/server/fault-json';
import { resolveBody } from '@lib/faults-shared';


/**
 * POST /api/faults/:id/resolve { resolution, returnToService?: { checklist } } (steward, admin) → the fault, resolved,
 * with `outcome` { machineStatus, statusChanged, openStopFaults, openFaults, next }; the reporter is e-mailed.
 * With returnToService the machine goes back into service in the same step (409 open_stop_fault while another stop
 * fault is open, 422 checklist_incomplete).
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'fault');
  const input = await readJson(request, resolveBody);
  const f = await resolveFault(person, id, input.resolution, new Date(), input.returnToService ? { returnToService: input.returnToService } : {});
  return json({ ...faultJson(f), outcome: f.outcome });
});
