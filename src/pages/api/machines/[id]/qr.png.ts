import { requireSignedIn, route } from '@lib/server/http';
import { qrFor, qrPng } from '@lib/server/labels';

/** GET /api/machines/:id/qr.png (signed in) → the QR symbol (PNG, 600 px) encoding the machine page's URL. */
export const GET = route(async ({ locals, params }) => {
  requireSignedIn(locals);
  const { url } = await qrFor(params.id ?? '');
  return new Response(new Uint8Array(await qrPng(url)), { headers: { 'content-type': 'image/png', 'cache-control': 'no-store' } });
});
