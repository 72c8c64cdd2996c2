import { z } from 'zod';
import { json, readQuery, requireSignedIn, route } from '../../../lib/server/http';
import { cutEstimateFor } from '../../../lib/server/materials';
import { uuid } from '../../../lib/schemas';

const n = (label: string) => z.coerce.number({ error: `${label} must be a number.` }).refine(Number.isFinite, `${label} must be a number.`);
const query = z.object({ powerW: n('powerW'), materialId: uuid, thicknessMm: n('thicknessMm'), kerfMm: n('kerfMm').optional() });

/** GET /api/tools/cut-estimate?powerW=&materialId=&thicknessMm=&kerfMm= (signed in) → { speedMmPerS, lineEnergyJPerMm, withinReach, assumptions }. */
export const GET = route(async ({ locals, url }) => {
  requireSignedIn(locals);
  const q = readQuery(url, query);
  const e = await cutEstimateFor(q.materialId, q.powerW, q.thicknessMm, q.kerfMm);
  return json({ speedMmPerS: e.speedMmPerS, lineEnergyJPerMm: e.lineEnergyJPerMm, withinReach: e.withinReach, assumptions: e.assumptions });
});
