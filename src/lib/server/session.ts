/** Resolves the Auth.js session of a request into the signed-in person (fresh roles, active only). */
import { getSession } from 'auth-astro/server';
import { getPerson } from './people';
import type { SignedInPerson } from '../signed-in-person';

export type { SignedInPerson };

export async function resolvePerson(request: Request): Promise<SignedInPerson | null> {
  let session;
  try {
    session = await getSession(request);
  } catch {
    return null;
  }
  const user = session?.user as { id?: string; epoch?: number } | undefined;
  const id = user?.id;
  if (!id || !/^[0-9a-f-]{36}$/i.test(id)) return null;
  const person = await getPerson(id);
  if (!person || !person.active || !person.emailConfirmed) return null;
  // a password reset or change, or closing the account, raises the epoch: every session issued before ends
  if ((typeof user.epoch === 'number' ? user.epoch : 0) !== person.sessionEpoch) return null;
  return { id: person.id, email: person.email, name: person.name, roles: person.roles };
}
