import { json, readJson, route } from '@lib/server/http';
import { authenticate } from '@lib/server/controllers/registry';
import { heartbeat } from '@lib/server/controllers/release';
import { heartbeatBody } from '@lib/controller-schemas';

/** POST /api/controller/heartbeat {sessionId?, beamSeconds?, firmware?} (device token) → 200 {ok, state, …}. */
export const POST = route(async ({ request }) => {
  const ctrl = await authenticate(request.headers.get('authorization'));
  const input = await readJson(request, heartbeatBody);
  return json(await heartbeat(ctrl, input));
});
