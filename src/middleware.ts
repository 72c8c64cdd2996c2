/**
 * Runs before every page and API route: refuses cross-site writes and oversize or unframed request bodies, resolves the session
 * once into Astro.locals.person and adds the security headers to every answer.
 */
import { randomUUID } from 'node:crypto';
import { defineMiddleware } from 'astro:middleware';
import { currentRequest } from './lib/server/log';
import { errorResponse } from './lib/server/http';
import { resolvePerson } from './lib/server/session';
import { inlineScriptHashes, pagePolicy, securityHeaders } from './lib/server/security-headers';

/**
 * The largest request body any route takes (the 10 MB safety data sheet plus its form fields). JSON routes
 * have their own, smaller limit in readJson. Auth.js's own endpoints are left to Auth.js.
 */
export const MAX_BODY_BYTES = 10 * 1024 * 1024 + 64 * 1024;

function bodyRefusal(request: Request, url: URL): Response | null {
  const path = url.pathname;
  if (request.method === 'GET' || request.method === 'HEAD' || request.method === 'OPTIONS' || path.startsWith('/api/auth/')) return null;
  // Astro's origin check covers form posts; this covers every other write (JSON included): a browser that
  // says the request comes from another site is refused. Callers without an Origin (webhooks, scripts) pass.
  const origin = request.headers.get('origin');
  if ((origin && origin !== url.origin) || request.headers.get('sec-fetch-site') === 'cross-site') {
    return errorResponse(403, 'cross_site', 'Cross-site requests are not accepted.');
  }
  const length = request.headers.get('content-length');
  if (length === null) {
    // a streamed body of unknown size could be endless: every browser form and fetch sends a length
    if (request.headers.has('transfer-encoding')) return errorResponse(411, 'length_required', 'Send the body with a Content-Length.');
    return null;
  }
  const n = Number(length);
  if (!Number.isFinite(n) || n < 0) return errorResponse(400, 'bad_length', 'The Content-Length is not a number.');
  if (n > MAX_BODY_BYTES) return errorResponse(413, 'body_too_large', `The body is larger than ${Math.floor(MAX_BODY_BYTES / 1024 / 1024)} MB.`);
  return null;
}

export const onRequest = defineMiddleware(async (ctx, next) => {
  ctx.locals.person = null;
  // the request id and route go to the server wrapper's one log line per request (scripts/serve.ts)
  const context = currentRequest();
  ctx.locals.requestId = context?.requestId ?? randomUUID();
  if (context) context.route = ctx.routePattern;
  const path = ctx.url.pathname;
  let response = bodyRefusal(ctx.request, ctx.url);
  if (!response) {
    if (!path.startsWith('/_astro/') && !path.startsWith('/api/auth/')) {
      ctx.locals.person = await resolvePerson(ctx.request);
      if (context && ctx.locals.person) context.personId = ctx.locals.person.id;
    }
    response = await next();
  }
  if ((response.headers.get('content-type') ?? '').startsWith('text/html') && response.body) {
    // pages: a policy that names the page's own inline scripts by hash (the island loader)
    const html = await response.text();
    const headers = new Headers(response.headers);
    headers.set('content-security-policy', pagePolicy(inlineScriptHashes(html)));
    response = new Response(html, { status: response.status, statusText: response.statusText, headers });
  }
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
