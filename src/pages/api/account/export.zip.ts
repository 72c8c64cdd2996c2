import { requireSignedIn, route } from '@lib/server/http';
import { exportPersonalData, personalDataZip } from '@lib/server/account-export';

/** GET /api/account/export.zip (signed in) → the same data as a zip of CSV files, one per part. */
export const GET = route(async ({ locals }) => {
  const me = requireSignedIn(locals);
  const zip = personalDataZip(await exportPersonalData(me.id));
  return new Response(Buffer.from(zip), {
    status: 200,
    headers: { 'content-type': 'application/zip', 'content-disposition': 'attachment; filename="my-beamwarden-data.zip"', 'cache-control': 'no-store' },
  });
});
