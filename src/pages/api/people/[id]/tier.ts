import { z } from 'zod';
import { HttpError, json, readJson, requireRole, route } from '../../../../lib/server/http';
import { setTier } from '../../../../lib/server/people';
import { costCentre, tier, uuid } from '../../../../lib/schemas';

const body = z.object({ tier, costCentre: costCentre.nullable().default(null) }).strict();

/** PUT /api/people/:id/tier {tier, costCentre} (admin) → the person with the new tier; audited. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'person_not_found', 'No person has that id.');
  const input = await readJson(request, body);
  const p = await setTier(admin.id, id.data, input.tier, input.costCentre || null);
  return json({ id: p.id, email: p.email, name: p.name, tier: p.tier, costCentre: p.costCentre });
});
