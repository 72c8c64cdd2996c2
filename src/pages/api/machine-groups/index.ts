import { json, requireSignedIn, route } from '@lib/server/http';
import { listGroups } from '@lib/server/clearances/groups';

/** GET /api/machine-groups → machine groups with their machines, validity, refresher rule and checklist. */
export const GET = route(async ({ locals }) => {
  requireSignedIn(locals);
  return json({ groups: await listGroups() });
});
