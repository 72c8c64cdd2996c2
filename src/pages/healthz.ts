/** Liveness: the process is up and serving. No sign-in, no database. */
import type { APIRoute } from 'astro';
import { json } from '@lib/server/http';

export const GET: APIRoute = () => json({ status: 'up', uptimeSeconds: Math.round(process.uptime()) });
