import { route, errorResponse } from '@lib/server/http';
import { feedIcs } from '@lib/server/bookings/ics-feeds';

/** GET /api/calendar/<token>.ics → the person's private calendar feed (no sign-in: the token is the key). */
export const GET = route(async ({ params }) => {
  const ics = await feedIcs(params.token ?? '');
  if (ics === null) return errorResponse(404, 'not_found', 'This calendar address is not valid (it may have been revoked).');
  return new Response(ics, {
    status: 200,
    headers: { 'content-type': 'text/calendar; charset=utf-8', 'cache-control': 'private, no-store', 'content-disposition': 'inline; filename="beamwarden.ics"' },
  });
});
