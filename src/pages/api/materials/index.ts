import { json, requireSignedIn, route } from '@lib/server/http';
import { listMaterials, materialSummary } from '@lib/server/materials';

/** GET /api/materials (signed in) → [{ id, name, category, rule, reason, modes, composition }] by name. */
export const GET = route(async ({ locals }) => {
  requireSignedIn(locals);
  return json((await listMaterials()).map(materialSummary));
});
