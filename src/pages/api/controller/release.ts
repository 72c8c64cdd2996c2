import { json, readJson, route } from '@lib/server/http';
import { authenticate } from '@lib/server/controllers/registry';
import { release } from '@lib/server/controllers/release';
import { releaseBody } from '@lib/controller-schemas';

/** POST /api/controller/release {sessionId, beamSeconds} (device token) → 200 the closed session with its charge. */
export const POST = route(async ({ request }) => {
  const ctrl = await authenticate(request.headers.get('authorization'));
  const input = await readJson(request, releaseBody);
  return json(await release(ctrl, input));
});
