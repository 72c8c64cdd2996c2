import { z } from '@lib/zod';
import { json, readQuery, requireRole, route } from '@lib/server/http';
import { listFaults } from '@lib/server/faults/records';
import { faultJson } from '@lib/server/fault-json';
import { FAULT_SEVERITIES, FAULT_STATUSES } from '@lib/faults-shared';
import { uuid } from '@lib/schemas';

const query = z.object({
  status: z.enum([...FAULT_STATUSES, 'unresolved']).optional(),
  severity: z.enum(FAULT_SEVERITIES).optional(),
  machineId: uuid.optional(),
});

/** GET /api/faults?status=&severity=&machineId= (steward, admin) → the queue: unresolved first, stop first, oldest first. */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'steward', 'admin');
  const q = readQuery(url, query);
  return json((await listFaults(q)).map(faultJson));
});
