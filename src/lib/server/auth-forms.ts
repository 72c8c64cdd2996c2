/** Server-side helpers for our own sign-in, sign-up and sign-out forms (no client script needed). */
import type { AstroGlobal, APIContext } from 'astro';
import { Auth } from '@auth/core';
import { encode } from '@auth/core/jwt';
import authConfig from 'auth:config';
import { env } from './env';
import type { Person } from './people';

export const SESSION_MAX_AGE_S = 7 * 24 * 60 * 60;

function sessionCookieName(secure: boolean): string {
  return `${secure ? '__Secure-' : ''}authjs.session-token`;
}

/** The CSRF token Auth.js expects with a credentials sign-in; sets its cookie on this response when new. */
export async function csrfToken(Astro: AstroGlobal): Promise<string> {
  const url = new URL('/api/auth/csrf', Astro.url);
  const res = await Auth(new Request(url, { headers: { cookie: Astro.request.headers.get('cookie') ?? '' } }), authConfig);
  for (const cookie of res.headers.getSetCookie()) Astro.response.headers.append('set-cookie', cookie);
  const body = (await res.json()) as { csrfToken?: string };
  if (!body.csrfToken) throw new Error('Auth.js gave no CSRF token');
  return body.csrfToken;
}

/** Signs a person in directly (after sign-up), with the same JWT cookie Auth.js issues. */
export async function startSession(ctx: Pick<APIContext, 'url' | 'cookies'>, person: Person): Promise<void> {
  const secure = ctx.url.protocol === 'https:';
  const name = sessionCookieName(secure);
  const token = await encode({
    token: { sub: person.id, name: person.name, email: person.email, roles: person.roles, epoch: person.sessionEpoch },
    secret: env().AUTH_SECRET,
    salt: name,
    maxAge: SESSION_MAX_AGE_S,
  });
  ctx.cookies.set(name, token, { httpOnly: true, sameSite: 'lax', path: '/', secure, maxAge: SESSION_MAX_AGE_S });
}

/** Ends the session: the JWT lives only in the cookie, so removing it signs the person out. */
export function endSession(ctx: Pick<APIContext, 'cookies' | 'request'>): void {
  const names = (ctx.request.headers.get('cookie') ?? '')
    .split(';')
    .map((c) => c.split('=')[0]?.trim() ?? '')
    .filter((n) => /^(__Secure-)?authjs\.session-token(\.\d+)?$/.test(n));
  for (const name of new Set([...names, 'authjs.session-token'])) {
    ctx.cookies.delete(name, { path: '/', ...(name.startsWith('__Secure-') ? { secure: true } : {}) });
  }
}
