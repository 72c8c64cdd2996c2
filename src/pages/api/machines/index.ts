import { z } from '@lib/zod';
import { json, readJson, requireRole, requireSignedIn, route } from '@lib/server/http';
import { createMachine, listMachines, machineSummary } from '@lib/server/machines';
import { machineCode, machineFields } from '@lib/schemas';

const coolantRange = { path: ['coolantMaxC'], message: 'The highest coolant temperature must be above the lowest.' };
const createBody = machineFields
  .extend({ code: machineCode })
  .refine((v) => v.coolantMinC === null || v.coolantMaxC === null || v.coolantMinC < v.coolantMaxC, coolantRange);

/** GET /api/machines → every machine in use with its status (signed in). */
export const GET = route(async ({ locals }) => {
  requireSignedIn(locals);
  return json((await listMachines()).map(machineSummary));
});

/**
 * POST /api/machines → 201 the new machine (admin; audited). It starts in service with the default booking rules
 * and weekday opening hours; 409 `code_taken` when any machine, retired ones included, has the code.
 */
export const POST = route(async ({ locals, request }) => {
  const person = requireRole(locals, 'admin');
  const input: z.infer<typeof createBody> = await readJson(request, createBody);
  return json(await createMachine(person.id, input), 201);
});
