import { z } from '@lib/zod';
import { json, readQuery, requireSignedIn, route } from '@lib/server/http';
import { hazardOrThrow, hazardResponse } from '@lib/server/hazard';

const n = (label: string) => z.coerce.number({ error: `${label} must be a number.` }).refine(Number.isFinite, `${label} must be a number.`);
const query = z.object({
  powerW: n('powerW'),
  wavelengthUm: n('wavelengthUm'),
  beamDiameterMm: n('beamDiameterMm'),
  divergenceMrad: n('divergenceMrad'),
  lensFocalMm: n('lensFocalMm'),
  exposureS: n('exposureS').optional(),
});

/** GET /api/tools/hazard?powerW=&wavelengthUm=&beamDiameterMm=&divergenceMrad=&lensFocalMm=&exposureS= (signed in). */
export const GET = route(async ({ locals, url }) => {
  requireSignedIn(locals);
  return json(hazardResponse(hazardOrThrow(readQuery(url, query))));
});
