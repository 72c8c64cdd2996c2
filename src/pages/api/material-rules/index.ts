import { DomainError, json, readJson, requireRole, route } from '@lib/server/http';
import { createMaterial, halogenViolations, rulesByMachine, listOverrides, sheetsInForce } from '@lib/server/materials';
import { materialInput } from '@lib/material-schemas';

/**
 * GET /api/material-rules[?at=ISO instant] (admin) → every material with all its fields, the machines, overrides, effective limits and
 * `violations`: entries whose stored rule breaks the halogen rule (treated as blocked until fixed), and `sheets`: the
 * sheet list of the price version in force (sku, name, priceMinor, currency), which a sold material links to by code.
 * With `at`, sheet prices are those of the version in force at that moment (e.g. to preview the next version).
 */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const atText = url.searchParams.get('at');
  const at = atText === null ? new Date() : new Date(atText);
  if (Number.isNaN(at.getTime())) throw new DomainError('invalid', 'invalid', 'at is a date and time such as 2026-12-03T09:00:00Z.', { at: 'Not a date and time.' });
  const [{ machines, materials, effective }, overrides, sheets] = await Promise.all([rulesByMachine(at), listOverrides(), sheetsInForce(at)]);
  return json({
    machines: machines.map((m) => ({ id: m.id, code: m.code, name: m.name, powerW: m.powerW })),
    materials: materials.map((m) => ({ ...m, updatedAt: m.updatedAt.toISOString() })),
    overrides,
    effective,
    violations: halogenViolations(materials, overrides),
    sheets: [...sheets.values()],
  });
});

/** POST /api/material-rules (admin) → 201 the new material; audited. 422 halogen_not_allowed / composition_required / invalid_formula. */
export const POST = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, materialInput);
  return json(await createMaterial(admin.id, input), 201);
});
