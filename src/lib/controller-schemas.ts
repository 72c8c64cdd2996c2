/**
 * Request and answer bodies of the controller API and of controller/badge administration. The routes validate with
 * these, and the OpenAPI document (src/lib/server/openapi.ts) is generated from the same schemas.
 */
import { z } from '@lib/zod';
import { CUT_REASONS, DENY_REASONS, MAX_WAIT_SECONDS } from './controller-rules';

const badge = z.string().trim().min(4, 'A badge UID has at least 4 characters.').max(64, 'A badge UID has at most 64 characters.')
  .regex(/^[0-9A-Za-z:\- ]+$/, 'Letters, digits, colons, dashes and spaces only.')
  .meta({ description: 'The UID the reader gives, e.g. 04:A2:19:7F:33:80. Separators and case are ignored.', example: '04A2197F3380' });

const beamSeconds = z.number().int().min(0).max(86_400 * 7)
  .meta({ description: 'Cumulative beam-on seconds measured during this session (never reset within a session).', example: 754 });

export const authorizeBody = z.object({
  badge,
}).strict().meta({ id: 'AuthorizeRequest' });

export const authorizeAllow = z.object({
  allow: z.literal(true),
  sessionId: z.uuid(),
  personName: z.string(),
  until: z.iso.datetime().meta({ description: 'When the session ends (the booking end, or the end of a walk-up).' }),
  walkUp: z.boolean().meta({ description: 'True when this started a walk-up session rather than checking in a booking.' }),
}).meta({ id: 'AuthorizeAllow' });

export const authorizeDeny = z.object({
  allow: z.literal(false),
  reason: z.enum(DENY_REASONS),
  message: z.string().meta({ description: 'Short text for the display.' }),
}).meta({ id: 'AuthorizeDeny' });

export const authorizeAnswer = z.union([authorizeAllow, authorizeDeny]).meta({ id: 'AuthorizeAnswer' });

export const heartbeatBody = z.object({
  sessionId: z.uuid().optional(),
  beamSeconds: beamSeconds.optional(),
  firmware: z.string().trim().min(1).max(80).optional().meta({ description: 'Firmware name and version, shown to admins.', example: 'gatebox 1.4.2' }),
}).strict().meta({ id: 'HeartbeatRequest' });

export const stateQuery = z.object({
  wait: z.coerce.number().int().min(0).max(MAX_WAIT_SECONDS).optional()
    .meta({ description: `Seconds to hold the request open waiting for a change (0–${MAX_WAIT_SECONDS}); answers at once when the state differs from the last one sent.` }),
}).strict();

export const stateAnswer = z.object({
  state: z.enum(['enabled', 'cut']),
  reason: z.enum(CUT_REASONS).optional(),
  message: z.string().optional().meta({ description: 'Short text for the display.' }),
  until: z.iso.datetime().optional().meta({ description: 'While enabled: when the session ends. The relay opens a few minutes of grace later.' }),
  sessionId: z.uuid().optional(),
}).meta({ id: 'ControllerState' });

export const heartbeatAnswer = stateAnswer.extend({ ok: z.literal(true) }).meta({ id: 'HeartbeatAnswer' });

export const releaseBody = z.object({
  sessionId: z.uuid(),
  beamSeconds,
}).strict().meta({ id: 'ReleaseRequest' });

export const releaseAnswer = z.object({
  session: z.object({
    id: z.uuid(),
    checkedInAt: z.iso.datetime(),
    checkedOutAt: z.iso.datetime(),
    beamMinutes: z.number().int(),
    measuredBeamSeconds: z.number().int().nullable(),
    beamSource: z.enum(['measured', 'clock']),
  }),
  charge: z.object({
    id: z.uuid(),
    state: z.string(),
    currency: z.string(),
    amountMinor: z.number().int(),
    minutes: z.number().int().nullable(),
  }).nullable(),
  chargeProblem: z.string().nullable(),
}).meta({ id: 'ReleaseAnswer' });

export const createControllerBody = z.object({
  machineId: z.uuid(),
  name: z.string().trim().min(1, 'Give the controller a name.').max(80),
}).strict().meta({ id: 'CreateControllerRequest' });

export const controllerToken = z.object({
  id: z.uuid(),
  token: z.string().meta({ description: 'The device token. Shown once: store it in the box now.' }),
}).meta({ id: 'ControllerToken' });

export const enrolBadgeBody = z.object({ badge }).strict().meta({ id: 'EnrolBadgeRequest' });

export const assignUnknownBody = z.object({ personId: z.uuid() }).strict();

export const WALK_UP_MODES = ['bookings_only', 'walk_ups_allowed'] as const;
export const walkUpsBody = z.object({
  mode: z.enum(WALK_UP_MODES).meta({ description: 'bookings_only: a badge fires the machine only on a booking. walk_ups_allowed: also on a free machine in opening hours.' }),
}).strict().meta({ id: 'WalkUpSetting' });

export const apiError = z.object({
  error: z.object({ code: z.string(), message: z.string(), fields: z.record(z.string(), z.string()).optional() }),
}).meta({ id: 'Error' });
