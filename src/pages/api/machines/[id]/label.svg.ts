import { requireRole, route } from '@lib/server/http';
import { labelSvgFor } from '@lib/server/labels';

/** GET /api/machines/:id/label.svg (steward, admin) → the printable label: QR, name, three cautions (90 × 50 mm). */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'steward', 'admin');
  const { machine, svg } = await labelSvgFor(params.id ?? '');
  return new Response(svg, {
    headers: { 'content-type': 'image/svg+xml; charset=utf-8', 'cache-control': 'no-store', 'content-disposition': `inline; filename="label-${machine.code}.svg"` },
  });
});
