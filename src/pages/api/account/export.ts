import { json, requireSignedIn, route } from '@lib/server/http';
import { exportPersonalData } from '@lib/server/account-export';

/** GET /api/account/export (signed in) → 200 JSON {person, clearances, quizAttempts, bookings, sessions, charges, faults}: the person's own rows only. */
export const GET = route(async ({ locals, url }) => {
  const me = requireSignedIn(locals);
  const data = await exportPersonalData(me.id);
  const headers: Record<string, string> = url.searchParams.get('download') === '1' ? { 'content-disposition': 'attachment; filename="my-beamwarden-data.json"' } : {};
  return json(data, 200, headers);
});
