import { json, requireRole, route } from '@lib/server/http';
import { auditFacets } from '@lib/server/audit';

/** GET /api/audit/facets (admin) → {kinds, actors}: the choices of the Audit screen's filters. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json(await auditFacets());
});
