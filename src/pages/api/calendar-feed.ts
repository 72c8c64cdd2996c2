import { json, requireSignedIn, route } from '@lib/server/http';
import { feedStatus, revokeFeed, rotateFeedToken } from '@lib/server/bookings/ics-feeds';

/** GET /api/calendar-feed → whether the person has a private feed URL. */
export const GET = route(async ({ locals }) => json(await feedStatus(requireSignedIn(locals).id)));

/** POST /api/calendar-feed → a new private feed URL (any earlier one stops working). */
export const POST = route(async ({ locals }) => json(await rotateFeedToken(requireSignedIn(locals).id), 201));

/** DELETE /api/calendar-feed → revokes the private feed URL. */
export const DELETE = route(async ({ locals }) => {
  await revokeFeed(requireSignedIn(locals).id);
  return json({ ok: true });
});
