import { json, route } from '@lib/server/http';
import { controllerOpenApi } from '@lib/controller-openapi';

/** GET /api/openapi.json (anyone) → the OpenAPI 3.1 document of the controller API, generated from its zod schemas. */
export const GET = route(async () => json(controllerOpenApi(), 200, { 'cache-control': 'public, max-age=300' }));
