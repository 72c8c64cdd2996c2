import { json, requireSignedIn, route } from '../../../lib/server/http';
import { listMachines, machineSummary } from '../../../lib/server/machines';

/** GET /api/machines → every machine in use with its status (signed in). */
export const GET = route(async ({ locals }) => {
  requireSignedIn(locals);
  return json((await listMachines()).map(machineSummary));
});
