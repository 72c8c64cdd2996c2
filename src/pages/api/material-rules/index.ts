import { json, readJson, requireRole, route } from '../../../lib/server/http';
import { createMaterial, halogenViolations, rulesByMachine, listOverrides } from '../../../lib/server/materials';
import { materialInput } from '../../../lib/material-schemas';

/**
 * GET /api/material-rules (admin) → every material with all its fields, the machines, overrides, effective limits and
 * `violations`: entries whose stored rule breaks the halogen rule (treated as blocked until fixed).
 */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  const [{ machines, materials, effective }, overrides] = await Promise.all([rulesByMachine(), listOverrides()]);
  return json({
    machines: machines.map((m) => ({ id: m.id, code: m.code, name: m.name, powerW: m.powerW })),
    materials: materials.map((m) => ({ ...m, updatedAt: m.updatedAt.toISOString() })),
    overrides,
    effective,
    violations: halogenViolations(materials, overrides),
  });
});

/** POST /api/material-rules (admin) → 201 the new material; audited. 422 halogen_not_allowed / composition_required / invalid_formula. */
export const POST = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, materialInput);
  return json(await createMaterial(admin.id, input), 201);
});
