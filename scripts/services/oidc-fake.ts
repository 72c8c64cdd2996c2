/**
 * The local stand-in for an institution's identity provider: an OpenID Connect provider (oidc-provider) on
 * loopback whose accounts are the demo people. Its own development sign-in form takes a demo address as the
 * login (any password); consent is granted at once for the one client, Beamwarden.
 */
// @ts-expect-error the package ships no types (its @types package is not installed)
import Provider from 'oidc-provider';
import { DEMO_PEOPLE } from '../../seeds/01_site_people_machines';

const port = Number(process.env.OIDC_PORT ?? 9400);
const host = process.env.BIND_HOST ?? '127.0.0.1';
const issuer = `http://${host}:${port}`;
const clientId = process.env.OIDC_CLIENT_ID ?? 'beamwarden-local';
const clientSecret = process.env.OIDC_CLIENT_SECRET ?? 'beamwarden-local-secret';
const redirectUris = (process.env.OIDC_REDIRECT_URIS ?? 'http://127.0.0.1:4321/api/auth/callback/institution').split(',').filter(Boolean);

/** Affiliation claim of each demo person (an admin maps its values to tiers in Beamwarden). */
const AFFILIATION: Record<string, string> = { 'student@tidewater.example': 'student', 'instructor@tidewater.example': 'staff', 'steward@tidewater.example': 'staff', 'admin@tidewater.example': 'staff' };

const people = new Map<string, { email: string; name: string }>(DEMO_PEOPLE.map((p) => [p.email, { email: p.email, name: p.name }]));
// one extra account that Beamwarden has not seen yet: signing in creates them as a member
people.set('visitor@tidewater.example', { email: 'visitor@tidewater.example', name: 'Vai Visitor' });

const provider = new Provider(issuer, {
  clients: [{ client_id: clientId, client_secret: clientSecret, redirect_uris: redirectUris, grant_types: ['authorization_code'], response_types: ['code'] }],
  claims: { openid: ['sub'], email: ['email', 'email_verified'], profile: ['name', 'affiliation'] },
  scopes: ['openid', 'email', 'profile'],
  // put the e-mail and profile claims in the ID token too (Auth.js reads the person from the ID token)
  conformIdTokenClaims: false,
  features: { devInteractions: { enabled: true } },
  cookies: { keys: ['beamwarden-local-oidc-fake-cookie-key'] },
  async findAccount(_ctx: unknown, sub: string) {
    const person = people.get(String(sub).trim().toLowerCase());
    if (!person) return undefined;
    return {
      accountId: person.email,
      async claims() {
        return { sub: person.email, email: person.email, email_verified: true, name: person.name, affiliation: AFFILIATION[person.email] ?? 'community' };
      },
    };
  },
  // the one client is ours: grant what it asks for without a consent screen
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  async loadExistingGrant(ctx: any) {
    const session = ctx.oidc.session;
    const client = ctx.oidc.client;
    if (!session?.accountId || !client) return undefined;
    const grant = new ctx.oidc.provider.Grant({ clientId: client.clientId, accountId: session.accountId });
    grant.addOIDCScope('openid email profile');
    await grant.save();
    return grant;
  },
});
provider.proxy = false;

provider.listen(port, host);
console.log(`identity provider fake listening on ${issuer}`);
