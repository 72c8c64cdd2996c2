/** Institution sign-in (OpenID Connect): the admin's settings and the pure rules of matching a person. No I/O. */
import { z } from '@lib/zod';
import { TIERS, type Tier } from './vocabulary';

export const institutionSettingsInput = z
  .object({
    institutionName: z.string().trim().min(1).max(120).nullable(),
    tierClaim: z.string().trim().min(1).max(100).regex(/^[A-Za-z0-9_.:-]+$/, 'Use letters, digits, dots, colons, dashes and underscores.').nullable(),
    tierMap: z.record(z.string().trim().min(1).max(200), z.enum(TIERS)).refine((m) => Object.keys(m).length <= 50, 'At most 50 values.'),
    passwordSignInOff: z.boolean(),
  })
  .strict();
export type InstitutionSettings = z.infer<typeof institutionSettingsInput>;

/** The domain of an address, lower case ('' when there is none). */
export function domainOf(email: string): string {
  const at = email.lastIndexOf('@');
  return at < 0 ? '' : email.slice(at + 1).trim().toLowerCase();
}

export function parseDomains(list: string): string[] {
  return list.split(',').map((d) => d.trim().toLowerCase().replace(/^@/, '')).filter(Boolean);
}

/** The tier a claim value maps to (first match when the claim is a list), else community. */
export function tierFromClaim(value: unknown, map: Record<string, Tier>): Tier {
  const values = Array.isArray(value) ? value : [value];
  for (const v of values) {
    if (typeof v === 'string' && map[v]) return map[v];
  }
  return 'community';
}

export type ClaimsCheck = { ok: true; email: string } | { ok: false; code: 'no_email' | 'unverified' | 'domain' };

/** The e-mail from the identity provider's claims, only when it is verified and of an allowed domain. */
export function checkClaims(claims: Record<string, unknown>, emailClaim: string, domains: string[]): ClaimsCheck {
  const raw = claims[emailClaim];
  if (typeof raw !== 'string' || !/^[^@\s]+@[^@\s]+$/.test(raw) || raw.length > 254) return { ok: false, code: 'no_email' };
  if (claims.email_verified !== true) return { ok: false, code: 'unverified' };
  const email = raw.trim().toLowerCase();
  if (!domains.includes(domainOf(email))) return { ok: false, code: 'domain' };
  return { ok: true, email };
}
