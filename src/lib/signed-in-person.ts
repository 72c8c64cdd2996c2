import type { Role } from './roles';

/** The person a request is signed in as (fresh roles, active only), as the middleware puts it on `locals`. */
export interface SignedInPerson {
  id: string;
  email: string;
  name: string;
  roles: Role[];
}
