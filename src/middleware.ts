/**
 * Runs before every page and API route: resolves the session once into Astro.locals.person and adds
 * the security headers to every answer.
 */
import { defineMiddleware } from 'astro:middleware';
import { resolvePerson } from './lib/server/session';
import { securityHeaders } from './lib/server/security-headers';

export const onRequest = defineMiddleware(async (ctx, next) => {
  ctx.locals.person = null;
  const path = ctx.url.pathname;
  if (!path.startsWith('/_astro/') && !path.startsWith('/api/auth/')) {
    ctx.locals.person = await resolvePerson(ctx.request);
  }
  const response = await next();
  for (const [name, value] of Object.entries(securityHeaders(ctx.url.protocol === 'https:'))) {
    if (!response.headers.has(name)) {
      try {
        response.headers.set(name, value);
      } catch {
        /* immutable headers (e.g. a redirect built by a library): leave them */
      }
    }
  }
  return response;
});
