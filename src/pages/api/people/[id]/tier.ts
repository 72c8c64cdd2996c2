import { z } from 'zod';
import { json, readJson, requireRole, route, HttpError } from '../../../../lib/server/http';
import { setTier } from '../../../../lib/server/booking-rules';
import { uuid } from '../../../../lib/schemas';
import { TIERS } from '../../../../lib/availability';

const body = z.object({ tier: z.enum(TIERS, { error: `A tier is one of ${TIERS.join(', ')}.` }) }).strict();

/** PUT /api/people/:id/tier → sets the person's membership tier (admin; audited). */
export const PUT = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new HttpError(404, 'not_found', 'No such person.');
  const input = await readJson(request, body);
  return json(await setTier(person.id, id.data, input.tier));
});
