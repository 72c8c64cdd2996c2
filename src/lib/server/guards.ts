/** Role checks for pages (API routes use requireRole in http.ts). */
import type { AstroGlobal } from 'astro';
import { hasAnyRole, type Role } from '@lib/roles';

/**
 * Signed out → the sign-in page, coming back here afterwards; signed in without any of `roles` →
 * the 403 page. Returns the response to send, or null when the person may see the page.
 */
export async function guardPage(Astro: AstroGlobal, ...roles: Role[]): Promise<Response | null> {
  const person = Astro.locals.person;
  if (!person) {
    const back = Astro.url.pathname + Astro.url.search;
    return Astro.redirect(`/signin?callbackUrl=${encodeURIComponent(back)}`, 303);
  }
  if (roles.length && !hasAnyRole(person.roles, roles)) {
    return Astro.rewrite('/403');
  }
  return null;
}

/** A callback URL is only followed when it is a path on this site (never another origin). */
export function safeCallback(raw: string | null | undefined, fallback = '/'): string {
  if (!raw || raw.length > 2000 || !raw.startsWith('/') || raw.startsWith('//') || raw.startsWith('/\\')) return fallback;
  try {
    const u = new URL(raw, 'http://local.invalid');
    return u.origin === 'http://local.invalid' ? u.pathname + u.search + u.hash : fallback;
  } catch {
    return fallback;
  }
}
