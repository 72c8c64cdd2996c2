/**
 * The OpenAPI 3.1 document of the controller API and of controller and badge administration, generated from the
 * zod schemas the routes validate with (@asteasolutions/zod-to-openapi). Pure: builds the document, no I/O.
 */
import { OpenAPIRegistry, OpenApiGeneratorV31 } from '@asteasolutions/zod-to-openapi';
import { z } from '@lib/zod';
import {
  apiError,
  assignUnknownBody,
  authorizeAnswer,
  authorizeBody,
  controllerToken,
  createControllerBody,
  enrolBadgeBody,
  heartbeatAnswer,
  heartbeatBody,
  releaseAnswer,
  releaseBody,
  stateAnswer,
  stateQuery,
  walkUpsBody,
} from './controller-schemas';

/** Every path of the controller API (the box's calls); the tests check the document lists each. */
export const CONTROLLER_PATHS = ['/api/controller/authorize', '/api/controller/heartbeat', '/api/controller/state', '/api/controller/release'] as const;

const err = (description: string) => ({ description, content: { 'application/json': { schema: apiError } } });
const ok = (description: string, schema: z.ZodType) => ({ description, content: { 'application/json': { schema } } });
const body = (schema: z.ZodType) => ({ body: { required: true, content: { 'application/json': { schema } } } });
const idParams = (what: string) => z.object({ id: z.uuid().meta({ description: `The ${what}'s id.` }) });

let cached: object | undefined;

export function controllerOpenApi(): object {
  if (cached) return cached;
  const r = new OpenAPIRegistry();
  const device = r.registerComponent('securitySchemes', 'deviceToken', {
    type: 'http', scheme: 'bearer', description: 'The device token shown once when an admin registers the controller (Machines screen).',
  });
  const session = r.registerComponent('securitySchemes', 'session', {
    type: 'apiKey', in: 'cookie', name: 'authjs.session-token', description: 'A signed-in person (browser session).',
  });
  const asDevice = [{ [device.name]: [] }];
  const asPerson = [{ [session.name]: [] }];

  r.registerPath({
    method: 'post', path: '/api/controller/authorize', tags: ['Controller'], security: asDevice,
    summary: 'May this badge fire the machine now?',
    description: 'Allow checks the person in on their booking (the check-in window is open from 10 minutes before the start) or, where the site allows walk-ups, starts a walk-up on a free machine in opening hours. Deny carries a reason and a short message for the display. Every decision is audited.',
    request: body(authorizeBody),
    responses: { 200: ok('The decision.', authorizeAnswer), 401: err('Wrong, rotated or revoked token.'), 422: err('Invalid body.') },
  });
  r.registerPath({
    method: 'post', path: '/api/controller/heartbeat', tags: ['Controller'], security: asDevice,
    summary: 'Report that the box is alive, its firmware, and the cumulative beam seconds of the open session',
    description: 'Send every 30 seconds. beamSeconds is cumulative for the session; billing uses the highest value reported.',
    request: body(heartbeatBody),
    responses: { 200: ok('Received; the current state.', heartbeatAnswer), 401: err('Wrong, rotated or revoked token.'), 404: err('No such session on this machine.'), 422: err('Invalid body.') },
  });
  r.registerPath({
    method: 'get', path: '/api/controller/state', tags: ['Controller'], security: asDevice,
    summary: 'The relay state (long-poll)',
    description: 'Answers at once when the state differs from the one last sent to this controller; otherwise holds the request up to `wait` seconds and answers as soon as it changes (a stop fault, an out-of-service change, a suspended clearance, or the session end plus a 5-minute grace). Poll again straight after each answer. `cut` means open the relay now.',
    request: { query: stateQuery },
    responses: { 200: ok('The state.', stateAnswer), 401: err('Wrong, rotated or revoked token.'), 422: err('Invalid query.') },
  });
  r.registerPath({
    method: 'post', path: '/api/controller/release', tags: ['Controller'], security: asDevice,
    summary: 'Badge out or time up: check the person out',
    description: 'Records the final cumulative beam seconds and checks the person out; the charge is priced on measured beam time (a started minute counts). Repeating the call answers the same closed session.',
    request: body(releaseBody),
    responses: { 200: ok('The closed session with its charge.', releaseAnswer), 401: err('Wrong, rotated or revoked token.'), 404: err('No such session on this machine.'), 422: err('Invalid body.') },
  });

  r.registerPath({
    method: 'post', path: '/api/controllers', tags: ['Administration'], security: asPerson, summary: 'Register a controller for a machine (admin)',
    request: body(createControllerBody),
    responses: { 201: ok('The controller and its device token (shown this once).', controllerToken), 403: err('Not an admin.'), 422: err('Invalid body.') },
  });
  r.registerPath({
    method: 'post', path: '/api/controllers/{id}/rotate', tags: ['Administration'], security: asPerson, summary: 'A new device token (admin); the old one stops working',
    request: { params: idParams('controller') },
    responses: { 200: ok('The new token (shown this once).', controllerToken), 404: err('No such controller.'), 409: err('Revoked.') },
  });
  r.registerPath({
    method: 'post', path: '/api/controllers/{id}/revoke', tags: ['Administration'], security: asPerson, summary: 'Revoke a controller (admin); its token answers 401',
    request: { params: idParams('controller') },
    responses: { 200: ok('Revoked.', z.object({ id: z.uuid(), revokedAt: z.iso.datetime() })), 404: err('No such controller.') },
  });
  r.registerPath({
    method: 'put', path: '/api/controllers/walk-ups', tags: ['Administration'], security: asPerson, summary: 'Allow or stop walk-up sessions at the controllers (admin)',
    request: body(walkUpsBody),
    responses: { 200: ok('The setting.', walkUpsBody) },
  });
  r.registerPath({
    method: 'post', path: '/api/people/{id}/badges', tags: ['Badges'], security: asPerson, summary: 'Enrol a badge for a person (steward, admin)',
    request: { params: idParams('person'), ...body(enrolBadgeBody) },
    responses: { 201: ok('Enrolled; only the last four characters are kept readable.', z.object({ id: z.uuid(), lastFour: z.string(), createdAt: z.iso.datetime() })), 409: err('Badge already enrolled.') },
  });
  r.registerPath({
    method: 'post', path: '/api/badges/unknown/{id}/assign', tags: ['Badges'], security: asPerson, summary: 'Give an unknown badge seen in the last hour to a person (steward, admin)',
    request: { params: idParams('unknown badge'), ...body(assignUnknownBody) },
    responses: { 201: ok('Enrolled.', z.object({ id: z.uuid(), lastFour: z.string(), createdAt: z.iso.datetime() })), 404: err('Not seen in the last hour.') },
  });

  cached = new OpenApiGeneratorV31(r.definitions).generateDocument({
    openapi: '3.1.0',
    info: {
      title: 'Beamwarden controller API',
      version: '1.0.0',
      description: 'For the box at each laser (badge reader + relay on the machine’s enable line). The relay must fail safe: without an `enabled` answer in the last 60 seconds, open it. The controller is an addition to the machine’s interlocks and emergency stop, never a replacement; the local laser safety officer and the manufacturer’s manual take precedence.',
    },
    servers: [{ url: '/' }],
  });
  return cached;
}
