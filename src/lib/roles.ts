/** Roles a person can hold (several at once). Shared by server and client code; no I/O. */
export const ROLES = ['member', 'instructor', 'steward', 'admin'] as const;
export type Role = (typeof ROLES)[number];

export const ROLE_LABELS: Record<Role, string> = {
  member: 'Member',
  instructor: 'Instructor',
  steward: 'Steward',
  admin: 'Admin',
};

export function isRole(value: unknown): value is Role {
  return typeof value === 'string' && (ROLES as readonly string[]).includes(value);
}

export function hasAnyRole(roles: readonly string[] | undefined | null, wanted: readonly Role[]): boolean {
  if (!roles) return false;
  return wanted.some((r) => roles.includes(r));
}

/** Roles in their canonical order, without repeats. */
export function normaliseRoles(roles: readonly string[]): Role[] {
  return ROLES.filter((r) => roles.includes(r));
}

/** Who is acting: a person's id and roles (a signed-in person is one; so is the worker acting for someone). */
export interface Actor {
  id: string;
  roles: readonly Role[];
}
