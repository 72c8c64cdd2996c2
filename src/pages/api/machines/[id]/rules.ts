import { z } from '@lib/zod';
import { idParam, json, readJson, requireRole, requireSignedIn, route } from '@lib/server/http';
import { getRules, saveRules } from '@lib/server/booking-rules';
import { publicRules } from '@lib/server/bookings/week-view';
import { TIERS } from '@lib/vocabulary';

const minutes = (max: number) => z.number().int('Whole minutes.').min(0).max(max);
const quota = z.number().int('Whole minutes.').min(0).max(10080).nullable();
const body = z
  .object({
    slotMinutes: z.union([z.literal(5), z.literal(10), z.literal(15), z.literal(20), z.literal(30), z.literal(60)], { error: 'The grid is 5, 10, 15, 20, 30 or 60 minutes.' }),
    minMinutes: minutes(1440).refine((v) => v > 0, 'At least 1 minute.'),
    maxMinutes: minutes(1440).refine((v) => v > 0, 'At least 1 minute.'),
    bufferMinutes: minutes(240),
    leadMinutes: minutes(10080),
    horizonDays: z.number().int().min(1).max(365),
    cancelCutoffMinutes: minutes(10080),
    quotas: z.object(Object.fromEntries(TIERS.map((t) => [t, quota])) as Record<(typeof TIERS)[number], typeof quota>).strict(),
    hours: z
      .array(
        z
          .object({ weekday: z.number().int().min(1).max(7), opensMinute: minutes(1439), closesMinute: minutes(1440) })
          .strict()
          .refine((h) => h.closesMinute > h.opensMinute, { path: ['closesMinute'], message: 'Closing is after opening.' }),
      )
      .max(50),
  })
  .strict()
  .superRefine((v, ctx) => {
    if (v.maxMinutes < v.minMinutes) ctx.addIssue({ code: 'custom', path: ['maxMinutes'], message: 'The longest booking cannot be shorter than the shortest.' });
    if (v.minMinutes % v.slotMinutes) ctx.addIssue({ code: 'custom', path: ['minMinutes'], message: 'Use a multiple of the grid.' });
    if (v.maxMinutes % v.slotMinutes) ctx.addIssue({ code: 'custom', path: ['maxMinutes'], message: 'Use a multiple of the grid.' });
    for (let i = 0; i < v.hours.length; i++) {
      for (let j = 0; j < i; j++) {
        const a = v.hours[i]!;
        const b = v.hours[j]!;
        if (a.weekday === b.weekday && a.opensMinute < b.closesMinute && b.opensMinute < a.closesMinute) {
          ctx.addIssue({ code: 'custom', path: ['hours', i], message: 'Opening hours of one day must not overlap.' });
        }
      }
    }
  });

const machineId = (raw: string | undefined) => idParam(raw, 'machine');

/** GET /api/machines/:id/rules → the machine's booking rules (signed in). */
export const GET = route(async ({ locals, params }) => {
  requireSignedIn(locals);
  return json(publicRules(await getRules(machineId(params.id))));
});

/** PUT /api/machines/:id/rules → replaces rules, quotas and opening hours (admin; audited). */
export const PUT = route(async ({ locals, params, request }) => {
  const person = requireRole(locals, 'admin');
  const id = machineId(params.id);
  const input = await readJson(request, body);
  return json(publicRules(await saveRules(person.id, id, input)));
});
