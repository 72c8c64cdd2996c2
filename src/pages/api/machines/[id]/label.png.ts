import { requireRole, route } from '@lib/server/http';
import { labelPngFor } from '@lib/server/labels';

/** GET /api/machines/:id/label.png (steward, admin) → the printable label as PNG (1080 × 600, 12 px/mm). */
export const GET = route(async ({ locals, params }) => {
  requireRole(locals, 'steward', 'admin');
  const { machine, png } = await labelPngFor(params.id ?? '');
  return new Response(new Uint8Array(png), {
    headers: { 'content-type': 'image/png', 'cache-control': 'no-store', 'content-disposition': `inline; filename="label-${machine.code}.png"` },
  });
});
