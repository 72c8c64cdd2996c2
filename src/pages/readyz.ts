/** Readiness: 200 when the database, its schema and the job queue are all fine; 503 with each state when not. No sign-in. */
import type { APIRoute } from 'astro';
import { json } from '@lib/server/http';
import { readiness } from '@lib/server/health';

export const GET: APIRoute = async () => {
  const r = await readiness();
  return json({ status: r.ready ? 'ready' : 'not ready', checks: r.checks }, r.ready ? 200 : 503);
};
