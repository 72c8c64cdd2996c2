import { z } from '@lib/zod';
import { json, readQuery, requireSignedIn, route } from '@lib/server/http';
import { hazardResponse, machineHazard } from '@lib/server/hazard';

const query = z.object({ exposureS: z.coerce.number({ error: 'exposureS must be a number.' }).optional() });

/** GET /api/machines/:id/hazard?exposureS= (signed in) → the hazard figures of a stored machine. */
export const GET = route(async ({ locals, params, url }) => {
  requireSignedIn(locals);
  const { exposureS } = readQuery(url, query);
  const { sheet } = await machineHazard(params.id ?? '', exposureS);
  return json(hazardResponse(sheet));
});
