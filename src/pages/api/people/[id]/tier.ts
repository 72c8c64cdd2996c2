import { z } from '@lib/zod';
import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { setTier } from '@lib/server/people';
import { costCentre, tier } from '@lib/schemas';

const body = z.object({ tier, costCentre: costCentre.nullable().default(null) }).strict();

/** PUT /api/people/:id/tier {tier, costCentre} (admin) → the person with the new tier; audited. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const id = idParam(params.id, 'person');
  const input = await readJson(request, body);
  const p = await setTier(admin.id, id, input.tier, input.costCentre || null);
  return json({ id: p.id, email: p.email, name: p.name, tier: p.tier, costCentre: p.costCentre });
});
