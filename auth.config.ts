/**
 * Auth.js (through auth-astro): e-mail and password sign-in and, when OIDC_* is set, institution sign-in through
 * its OpenID Connect provider; JWT sessions carrying the person's roles and session epoch.
 * The secret and the provider settings are read from the environment when the server starts, never baked into the build.
 */
import Credentials from '@auth/core/providers/credentials';
import type { Provider } from '@auth/core/providers';
import { CredentialsSignin } from '@auth/core/errors';
import { defineConfig } from 'auth-astro';
import { CLIENT_ADDRESS_HEADER } from './src/lib/server/client-address';
import { checkSignIn } from './src/lib/server/sign-in';
import { getPerson } from './src/lib/server/people';
import { institutionConnection, personFromInstitution } from './src/lib/server/institution';

class ThrottledSignIn extends CredentialsSignin {
  override code = 'throttled';
}
class UnconfirmedSignIn extends CredentialsSignin {
  override code = 'unconfirmed';
}
class InstitutionOnlySignIn extends CredentialsSignin {
  override code = 'institution';
}

/** The institution's identity provider (generic OpenID Connect), when configured. */
function institutionProvider(): Provider[] {
  const c = institutionConnection();
  if (!c) return [];
  return [
    {
      id: 'institution',
      name: 'Institution',
      type: 'oidc',
      issuer: c.issuer,
      clientId: c.clientId,
      clientSecret: c.clientSecret,
      authorization: { params: { scope: 'openid email profile' } },
      checks: ['pkce', 'state', 'nonce'],
      // the person is found (or created) in signIn below; here only the claims are passed on
      profile(profile: Record<string, unknown>) {
        return { id: typeof profile.sub === 'string' ? profile.sub : '', claims: profile } as unknown as { id: string };
      },
    },
  ];
}

export default defineConfig({
  secret: process.env.AUTH_SECRET,
  trustHost: true,
  session: { strategy: 'jwt', maxAge: 7 * 24 * 60 * 60 },
  pages: { signIn: '/signin', error: '/signin' },
  logger: {
    error(error) {
      // A refused password is an expected event, not an error worth a stack trace in the log.
      if ((error as { type?: string }).type === 'CredentialsSignin') return;
      console.error('[auth]', error.message);
    },
    warn() {},
    debug() {},
  },
  providers: [
    Credentials({
      credentials: { email: { label: 'E-mail' }, password: { label: 'Password', type: 'password' } },
      async authorize(credentials, request) {
        const email = typeof credentials?.email === 'string' ? credentials.email : '';
        const password = typeof credentials?.password === 'string' ? credentials.password.slice(0, 1000) : '';
        const address = request.headers.get(CLIENT_ADDRESS_HEADER) ?? 'unknown';
        const outcome = await checkSignIn(email, password, address);
        if (outcome.ok) return outcome.person;
        if (outcome.reason === 'throttled') throw new ThrottledSignIn();
        if (outcome.reason === 'unconfirmed') throw new UnconfirmedSignIn();
        if (outcome.reason === 'institution') throw new InstitutionOnlySignIn();
        throw new CredentialsSignin();
      },
    }),
    ...institutionProvider(),
  ],
  callbacks: {
    async signIn({ user, account }) {
      if (account?.provider !== 'institution') return true;
      const claims = ((user as { claims?: Record<string, unknown> }).claims ?? {}) as Record<string, unknown>;
      const outcome = await personFromInstitution(claims);
      if (!outcome.ok) return `/signin?error=InstitutionSignIn&code=institution_${outcome.code}`;
      // from here on the session stands for our person, not the provider's subject
      user.id = outcome.person.id;
      user.email = outcome.person.email;
      user.name = outcome.person.name;
      delete (user as { claims?: unknown }).claims;
      return true;
    },
    async jwt({ token, user }) {
      if (user?.id) {
        token.sub = user.id;
        const person = await getPerson(user.id);
        token.roles = person?.roles ?? [];
        token.epoch = person?.sessionEpoch ?? 0;
        token.email = person?.email ?? null;
        token.name = person?.name ?? null;
      }
      return token;
    },
    session({ session, token }) {
      const user = session.user as typeof session.user & { id?: string; roles?: string[]; epoch?: number };
      if (token.sub) user.id = token.sub;
      user.roles = Array.isArray(token.roles) ? (token.roles as string[]) : [];
      user.epoch = typeof token.epoch === 'number' ? token.epoch : 0;
      return session;
    },
  },
});
