import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { checkDeclaredMaterials } from '@lib/server/materials';
import { declaredMaterial } from '@lib/material-schemas';

const body = z.object({ machineId: z.string().min(1).max(64), materials: z.array(declaredMaterial).min(1).max(20) }).strict();

/**
 * POST /api/tools/check-materials {machineId, materials:[{materialId, thicknessMm, mode}]} (signed in) → 200
 * {ok:true, warnings:[…]} (advice, e.g. thicker than the machine cuts in one pass), or 422 material_blocked /
 * material_limited / invalid — the same check booking creation runs.
 */
export const POST = route(async ({ locals, request }) => {
  requireSignedIn(locals);
  const { machineId, materials } = await readJson(request, body);
  const warnings = await checkDeclaredMaterials(machineId, materials);
  return json({ ok: true, warnings });
});
