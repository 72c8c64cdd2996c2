/** Field schemas of check-in, check-out and upkeep (routes and the machine page's forms). */
import { z } from '@lib/zod';
import { PRE_USE_ITEMS } from './checklist';
import { UPKEEP_KINDS } from './upkeep-forecast';

const tick = z.boolean({ error: 'Answer true or false.' }).optional();

export const checkInBody = z
  .object({
    checklist: z.object(Object.fromEntries(PRE_USE_ITEMS.map((i) => [i.key, tick])) as Record<(typeof PRE_USE_ITEMS)[number]['key'], typeof tick>).strict(),
    coolantC: z.number({ error: 'The coolant reading is a number in °C.' }).min(-20).max(80).nullable().optional(),
  })
  .strict();

export const checkOutBody = z
  .object({
    jobTimerMinutes: z.number().int('Whole minutes.').min(0).max(24 * 60).nullable().optional(),
    materials: z.array(z.object({ sku: z.string().trim().min(1).max(40), quantity: z.number().int().min(0).max(100) }).strict()).max(30).default([]),
    leftCleanAndClear: z.boolean().optional(),
  })
  .strict();

export const upkeepKind = z.enum(UPKEEP_KINDS, { error: `The kind is one of ${UPKEEP_KINDS.join(', ')}.` });

export const upkeepBody = z
  .object({
    kind: upkeepKind,
    performedAt: z.iso.datetime({ offset: true, error: 'Use an ISO 8601 date and time with an offset.' }).transform((s) => new Date(s)).optional(),
    notes: z.string().trim().max(2000, 'At most 2000 characters.').default(''),
    tubeModel: z.string().trim().min(1).max(120).nullable().optional(),
    tubeRatedHours: z.number().int().min(100).max(100_000).nullable().optional(),
  })
  .strict();

export const intervalBody = z
  .object({
    kind: upkeepKind,
    beamHours: z.number().positive('More than zero.').max(100_000).nullable(),
    days: z.number().int().min(1).max(3650).nullable(),
  })
  .strict();
