/**
 * Institution sign-in through the institution's OpenID Connect provider: its connection comes from the
 * environment (OIDC_*), what an admin decides (button name, tier mapping, password sign-in off) from the
 * `institution_sign_in` row. All SQL of that table.
 */
import { randomBytes } from 'node:crypto';
import { db, transaction } from './db';
import { env } from './env';
import { recordAudit } from './audit';
import { createPerson, EmailTaken } from './people';
import { getSettings } from './settings';
import { checkClaims, domainOf, parseDomains, tierFromClaim, type InstitutionSettings } from '@lib/institution-sign-in';
import type { Tier } from '@lib/vocabulary';

export interface InstitutionConnection {
  issuer: string;
  clientId: string;
  clientSecret: string;
  emailClaim: string;
  domains: string[];
}

/** The provider's connection, or null when institution sign-in is not configured. */
export function institutionConnection(): InstitutionConnection | null {
  const e = env();
  if (!e.OIDC_ISSUER || !e.OIDC_CLIENT_ID || !e.OIDC_CLIENT_SECRET) return null;
  return { issuer: e.OIDC_ISSUER, clientId: e.OIDC_CLIENT_ID, clientSecret: e.OIDC_CLIENT_SECRET, emailClaim: e.OIDC_EMAIL_CLAIM, domains: parseDomains(e.OIDC_ALLOWED_DOMAINS) };
}

export async function institutionSettings(): Promise<InstitutionSettings> {
  const row = await db()('institution_sign_in').where({ id: 1 }).first();
  return {
    institutionName: row?.institution_name ?? null,
    tierClaim: row?.tier_claim ?? null,
    tierMap: (row?.tier_map ?? {}) as Record<string, Tier>,
    passwordSignInOff: row?.password_sign_in_off ?? false,
  };
}

export async function updateInstitutionSettings(actorId: string, input: InstitutionSettings): Promise<InstitutionSettings> {
  await transaction(async (trx) => {
    const before = await trx('institution_sign_in').where({ id: 1 }).forUpdate().first();
    const row = { institution_name: input.institutionName, tier_claim: input.tierClaim, tier_map: JSON.stringify(input.tierMap), password_sign_in_off: input.passwordSignInOff, updated_at: trx.fn.now() };
    if (before) await trx('institution_sign_in').where({ id: 1 }).update(row);
    else await trx('institution_sign_in').insert({ id: 1, ...row });
    await recordAudit(trx, {
      actorId,
      kind: 'institution_sign_in.updated',
      subjectType: 'site',
      summary: `Institution sign-in: password sign-in ${input.passwordSignInOff ? 'off' : 'on'} for the institution's domains, tier claim ${input.tierClaim ?? 'none'}`,
      before: before ? { institutionName: before.institution_name, tierClaim: before.tier_claim, tierMap: before.tier_map, passwordSignInOff: before.password_sign_in_off } : null,
      after: input,
    });
  });
  return institutionSettings();
}

/** The label of the sign-in button ("Sign in with …"), or null when institution sign-in is off. */
export async function institutionButton(): Promise<{ label: string } | null> {
  if (!institutionConnection()) return null;
  const [s, site] = await Promise.all([institutionSettings(), getSettings()]);
  return { label: `Sign in with ${s.institutionName ?? site.name}` };
}

/** True when people of this address's domain must use institution sign-in (an admin turned passwords off). */
export async function passwordSignInRefusedFor(email: string): Promise<boolean> {
  const c = institutionConnection();
  if (!c || !c.domains.includes(domainOf(email))) return false;
  return (await institutionSettings()).passwordSignInOff;
}

export type InstitutionOutcome = { ok: true; person: { id: string; email: string; name: string } } | { ok: false; code: 'no_email' | 'unverified' | 'domain' | 'inactive' | 'off' };

/**
 * The person an institution sign-in stands for: the one with the verified e-mail, or a new member (tier from
 * the admin's claim mapping). The provider verified the address, so an unconfirmed match becomes confirmed.
 */
export async function personFromInstitution(claims: Record<string, unknown>): Promise<InstitutionOutcome> {
  const c = institutionConnection();
  if (!c) return { ok: false, code: 'off' };
  const checked = checkClaims(claims, c.emailClaim, c.domains);
  if (!checked.ok) return checked;
  const email = checked.email;
  const find = () => db()('people').whereRaw('lower(email) = lower(?)', [email]).first('id', 'email', 'name', 'active', 'email_confirmed_at', 'closed_at');
  let row = await find();
  if (!row) {
    const s = await institutionSettings();
    const tier = s.tierClaim ? tierFromClaim(claims[s.tierClaim], s.tierMap) : 'community';
    const name = typeof claims.name === 'string' && claims.name.trim() ? claims.name.trim().slice(0, 120) : email.split('@')[0]!;
    try {
      // a password nobody knows: this person signs in through the institution (or sets one by a reset link)
      await createPerson({ email, name, password: randomBytes(32).toString('base64url'), roles: ['member'], tier });
    } catch (err) {
      if (!(err instanceof EmailTaken)) throw err; // created at the same moment by a second sign-in: use it
    }
    row = await find();
    if (!row) return { ok: false, code: 'inactive' };
  }
  if (!row.active || row.closed_at) return { ok: false, code: 'inactive' };
  if (!row.email_confirmed_at) await db()('people').where({ id: row.id }).update({ email_confirmed_at: db().fn.now() });
  return { ok: true, person: { id: row.id, email: row.email, name: row.name } };
}
