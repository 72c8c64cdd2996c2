/**
 * A signed-in session without the sign-in form: the Auth.js session cookie (an encrypted JWT) written the way
 * auth.config.ts writes it, with the person's id, roles and session epoch. Argon2 and the form's round trips are
 * paid only by the tests of signing in itself (tests/integration/sign-in.test.ts, tests/e2e/sign-in-by-role.spec.ts),
 * which use Client.signInAs and signInThroughForm.
 */
import { encode } from '@auth/core/jwt';
import { testDb } from './db';

/** The cookie Auth.js uses on plain http (the test app); on https it is `__Secure-authjs.session-token`. */
export const SESSION_COOKIE = 'authjs.session-token';
const MAX_AGE_S = 7 * 24 * 60 * 60; // as auth.config.ts session.maxAge

/** The session cookie's value for the person with this e-mail address (as after a successful sign-in). */
export async function sessionCookieFor(email: string): Promise<string> {
  const secret = process.env.AUTH_SECRET;
  if (!secret) throw new Error('AUTH_SECRET is not set: run the tests through `npm test`.');
  const row = (await testDb()('people as p')
    .leftJoin('role_grants as g', 'g.person_id', 'p.id')
    .whereRaw('lower(p.email) = lower(?)', [email])
    .groupBy('p.id')
    .first('p.id', 'p.email', 'p.name', 'p.session_epoch', testDb().raw("coalesce(array_agg(g.role ORDER BY g.role) FILTER (WHERE g.role IS NOT NULL), '{}') AS roles"))) as
    | { id: string; email: string; name: string; session_epoch: number; roles: string[] }
    | undefined;
  if (!row) throw new Error(`no person ${email} to sign in`);
  return encode({
    token: { sub: row.id, email: row.email, name: row.name, roles: row.roles, epoch: row.session_epoch },
    secret,
    salt: SESSION_COOKIE,
    maxAge: MAX_AGE_S,
  });
}
