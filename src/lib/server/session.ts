/**
 * Resolves the Auth.js session of a request into the signed-in person (fresh roles, active only).
 *
 * The session is a JWT (encrypted, JWE) in the Auth.js session cookie. It is decoded here with Auth.js's own
 * `decode` (the same secret and salt Auth.js uses) instead of running a whole Auth.js request per page: that
 * request also re-encrypted the token for a cookie nobody sent back. Then one query reads the person with their
 * roles. What is refused is unchanged: no or a broken or expired token, an unknown, deactivated or unconfirmed
 * person, and a token issued before the person's session epoch was raised (password reset or change, account
 * closed), which ends every other session.
 */
import { decode } from '@auth/core/jwt';
import { env } from './env';
import { getPerson } from './people';
import type { SignedInPerson } from '@lib/signed-in-person';

export type { SignedInPerson };

/** Auth.js's session cookie name (and the salt of its key): `__Secure-` prefixed when served over https. */
const COOKIE = 'authjs.session-token';

/** The session token from the Cookie header: the cookie itself, or its chunks (`name.0`, `name.1`, …) joined in order. */
export function sessionTokenOf(request: Request): { token: string; salt: string } | null {
  const salt = new URL(request.url).protocol === 'https:' ? `__Secure-${COOKIE}` : COOKIE;
  const header = request.headers.get('cookie');
  if (!header) return null;
  const chunks: [number, string][] = [];
  for (const part of header.split(';')) {
    const i = part.indexOf('=');
    if (i < 0) continue;
    const name = part.slice(0, i).trim();
    if (!name.startsWith(salt)) continue;
    let value = part.slice(i + 1).trim();
    if (value.startsWith('"') && value.endsWith('"')) value = value.slice(1, -1);
    try {
      value = decodeURIComponent(value);
    } catch {
      continue;
    }
    if (!value) continue;
    // the same order Auth.js joins chunks in: by the number after the last dot (none counts as 0)
    chunks.push([parseInt(name.split('.').pop() || '0') || 0, value]);
  }
  if (!chunks.length) return null;
  chunks.sort((a, b) => a[0] - b[0]);
  return { token: chunks.map((c) => c[1]).join(''), salt };
}

type Payload = { sub?: unknown; epoch?: unknown; exp?: unknown } | null;

/**
 * Decoded tokens, by salt and token, for a minute (never past the token's own expiry): a browser sends the same
 * cookie with every request, and each decode derives the key again (HKDF) and decrypts. The payload is a pure
 * function of the token and the secret; the person, their roles and the session epoch are read fresh every time.
 */
const decoded = new Map<string, { payload: Payload; until: number }>();
const DECODED_MS = 60_000;
const DECODED_MAX = 2000;

async function decodeToken(token: string, salt: string): Promise<Payload> {
  const key = `${salt} ${token}`;
  const now = Date.now();
  const hit = decoded.get(key);
  if (hit && hit.until > now) return hit.payload;
  // checks the token's expiry too (Auth.js's 15 s clock tolerance); throws for a broken or expired token
  const payload = (await decode({ token, secret: env().AUTH_SECRET, salt })) as Payload;
  const exp = typeof payload?.exp === 'number' ? payload.exp * 1000 : now;
  if (decoded.size >= DECODED_MAX) decoded.clear();
  decoded.set(key, { payload, until: Math.min(now + DECODED_MS, exp) });
  return payload;
}

export async function resolvePerson(request: Request): Promise<SignedInPerson | null> {
  const found = sessionTokenOf(request);
  if (!found) return null;
  let payload: Payload;
  try {
    payload = await decodeToken(found.token, found.salt);
  } catch {
    return null;
  }
  const id = payload?.sub;
  if (typeof id !== 'string' || !/^[0-9a-f-]{36}$/i.test(id)) return null;
  const person = await getPerson(id);
  if (!person || !person.active || !person.emailConfirmed) return null;
  // a password reset or change, or closing the account, raises the epoch: every session issued before ends
  if ((typeof payload!.epoch === 'number' ? payload!.epoch : 0) !== person.sessionEpoch) return null;
  return { id: person.id, email: person.email, name: person.name, roles: person.roles };
}
