import { idParam, json, readJson, requireRole, route } from '@lib/server/http';
import { setOverride } from '@lib/server/materials';
import { overrideInput } from '@lib/material-schemas';

function ids(params: Record<string, string | undefined>) {
  return [idParam(params.id, 'material'), idParam(params.machineId, 'machine')] as const;
}

/** PUT /api/material-rules/:id/overrides/:machineId (admin) {rule, modes, maxCutMm, note} → the override; audited. */
export const PUT = route(async ({ locals, params, request }) => {
  const admin = requireRole(locals, 'admin');
  const [materialId, machineId] = ids(params);
  const input = await readJson(request, overrideInput);
  return json(await setOverride(admin.id, materialId, machineId, input));
});

/** DELETE /api/material-rules/:id/overrides/:machineId (admin) → 204; audited. */
export const DELETE = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const [materialId, machineId] = ids(params);
  await setOverride(admin.id, materialId, machineId, null);
  return new Response(null, { status: 204 });
});
