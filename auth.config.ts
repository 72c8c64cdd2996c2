/**
 * Auth.js (through auth-astro): e-mail and password sign-in, JWT sessions carrying the person's roles.
 * The secret is read from the environment when the server starts, never baked into the build.
 */
import Credentials from '@auth/core/providers/credentials';
import { CredentialsSignin } from '@auth/core/errors';
import { defineConfig } from 'auth-astro';
import { CLIENT_ADDRESS_HEADER } from './src/lib/server/client-address';
import { checkSignIn } from './src/lib/server/sign-in';
import { getPerson } from './src/lib/server/people';

class ThrottledSignIn extends CredentialsSignin {
  override code = 'throttled';
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
        throw new CredentialsSignin();
      },
    }),
  ],
  callbacks: {
    async jwt({ token, user }) {
      if (user?.id) {
        token.sub = user.id;
        const person = await getPerson(user.id);
        token.roles = person?.roles ?? [];
      }
      return token;
    },
    session({ session, token }) {
      const user = session.user as typeof session.user & { id?: string; roles?: string[] };
      if (token.sub) user.id = token.sub;
      user.roles = Array.isArray(token.roles) ? (token.roles as string[]) : [];
      return session;
    },
  },
});
