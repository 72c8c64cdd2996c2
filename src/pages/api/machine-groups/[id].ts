import { z } from '@lib/zod';
import { DomainError, idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { updateGroup } from '@lib/server/clearances/groups';
import { REFRESHER_RULES } from '@lib/clearance-rules';
import { hasAnyRole } from '@lib/roles';

const body = z
  .object({
    validityDays: z.number().int().min(1, 'At least one day.').max(3660, 'At most ten years.').optional(),
    refresher: z.enum(REFRESHER_RULES).optional(),
    checklist: z.array(z.string().trim().min(2).max(200)).min(1, 'Keep at least one checklist item.').max(30).optional(),
  })
  .strict();

/**
 * PATCH /api/machine-groups/:id — admins set the validity period and refresher rule; instructors
 * (and admins) set the practical checklist.
 */
export const PATCH = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin', 'instructor');
  const id = idParam(params.id, 'machine group');
  const input = await readJson(request, body);
  if ((input.validityDays !== undefined || input.refresher !== undefined) && !hasAnyRole(person.roles, ['admin'])) {
    throw new DomainError('forbidden', 'forbidden', 'Only an admin sets the validity period and the refresher rule.');
  }
  return json(await updateGroup(person.id, id, input));
});
