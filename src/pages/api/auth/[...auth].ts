/** Auth.js endpoints (sign-in callback, session, csrf). The client address is passed on for throttling. */
import type { APIContext, APIRoute } from 'astro';
import { AstroAuth } from 'auth-astro/server';
import { CLIENT_ADDRESS_HEADER, clientAddressOf } from '@lib/server/client-address';
import { errorResponse } from '@lib/server/http';

const handlers = AstroAuth();

async function withClientAddress(ctx: APIContext): Promise<APIContext> {
  const headers = new Headers(ctx.request.headers);
  headers.set(CLIENT_ADDRESS_HEADER, clientAddressOf(ctx));
  const body = ctx.request.method === 'GET' || ctx.request.method === 'HEAD' ? undefined : await ctx.request.arrayBuffer();
  const request = new Request(ctx.request.url, { method: ctx.request.method, headers, body });
  return { cookies: ctx.cookies, request } as APIContext;
}

const notFound = () => errorResponse(404, 'not_found', 'There is no such sign-in endpoint.');

export const GET: APIRoute = async (ctx) => (await handlers.GET(ctx)) ?? notFound();
export const POST: APIRoute = async (ctx) => (await handlers.POST(await withClientAddress(ctx))) ?? notFound();
