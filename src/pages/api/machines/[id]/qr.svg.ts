import { requireSignedIn, route } from '@lib/server/http';
import { qrFor, qrSvg } from '@lib/server/labels';

/** GET /api/machines/:id/qr.svg (signed in) → the QR symbol encoding the machine page's URL. */
export const GET = route(async ({ locals, params }) => {
  requireSignedIn(locals);
  const { url } = await qrFor(params.id ?? '');
  return new Response(await qrSvg(url), { headers: { 'content-type': 'image/svg+xml; charset=utf-8', 'cache-control': 'no-store' } });
});
