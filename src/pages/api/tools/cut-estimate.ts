import { z } from '@lib/zod';
import { json, readQuery, requireSignedIn, route } from '@lib/server/http';
import { cutEstimateFor } from '@lib/server/materials';
import { uuid } from '@lib/schemas';

const n = (label: string) => z.coerce.number({ error: `${label} must be a number.` }).refine(Number.isFinite, `${label} must be a number.`);
const query = z
  .object({ powerW: n('powerW').optional(), machineId: uuid.optional(), materialId: uuid, thicknessMm: n('thicknessMm'), kerfMm: n('kerfMm').optional() })
  .refine((q) => q.powerW !== undefined || q.machineId !== undefined, { path: ['machineId'], message: 'Give a machine or a power.' });

/**
 * GET /api/tools/cut-estimate?machineId=|powerW=&materialId=&thicknessMm=&kerfMm= (signed in)
 * → { speedMmPerS, lineEnergyJPerMm, withinReach, reachMm, ruleMaxCutMm, allowedByRule, notes, machine, assumptions }
 * (with a machine: its power and its effective rule), or { notOnThisMachine: true, message, machine } where the
 * material is blocked or not cut on that machine.
 */
export const GET = route(async ({ locals, url }) => {
  requireSignedIn(locals);
  const q = readQuery(url, query);
  const e = await cutEstimateFor(q.materialId, { ...(q.machineId ? { machineId: q.machineId } : {}), ...(q.powerW !== undefined ? { powerW: q.powerW } : {}) }, q.thicknessMm, q.kerfMm);
  if ('notOnThisMachine' in e) return json(e);
  return json({
    speedMmPerS: e.speedMmPerS, lineEnergyJPerMm: e.lineEnergyJPerMm, withinReach: e.withinReach, reachMm: e.reachMm,
    ruleMaxCutMm: e.ruleMaxCutMm, allowedByRule: e.allowedByRule, notes: e.notes, machine: e.machine, assumptions: e.assumptions,
  });
});
