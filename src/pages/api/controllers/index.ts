import { json, readJson, requireRole, route } from '@lib/server/http';
import { createController, listControllers, walkUpsAllowed } from '@lib/server/controllers/registry';
import { createControllerBody } from '@lib/controller-schemas';

/** GET /api/controllers (admin) → {walkUpsAllowed, controllers: [...]} (never a token). */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  const [rows, walkUps] = await Promise.all([listControllers(), walkUpsAllowed()]);
  return json({
    walkUpsAllowed: walkUps,
    controllers: rows.map((c) => ({
      id: c.id, machineId: c.machineId, machineName: c.machineName, machineCode: c.machineCode, name: c.name, firmware: c.firmware,
      lastState: c.lastState?.split(':')[0] ?? null, lastStateReason: c.lastState?.startsWith('cut:') ? c.lastState.slice(4) : null,
      lastSeenAt: c.lastSeenAt?.toISOString() ?? null, online: c.online, revokedAt: c.revokedAt?.toISOString() ?? null, createdAt: c.createdAt.toISOString(),
    })),
  });
});

/** POST /api/controllers {machineId, name} (admin) → 201 {id, token}: the token is shown this once. */
export const POST = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, createControllerBody);
  return json(await createController(admin.id, input), 201);
});
