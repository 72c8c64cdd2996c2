/**
 * The screens in the navigation, and who sees each. A screen appears here once it exists; its page
 * checks the same roles on the server (see src/lib/server/guards.ts).
 */
import { hasAnyRole, type Role } from './roles';

export interface NavItem {
  label: string;
  href: string;
  roles: Role[];
  group: 'everyone' | 'teaching' | 'upkeep' | 'admin';
}

export const NAV: NavItem[] = [
  { label: 'Floor', href: '/', roles: ['member', 'instructor', 'steward', 'admin'], group: 'everyone' },
  { label: 'People', href: '/admin/people', roles: ['admin'], group: 'admin' },
  { label: 'Materials', href: '/materials', roles: ['member', 'instructor', 'steward', 'admin'], group: 'everyone' },
  { label: 'Hazard sheets', href: '/hazard', roles: ['member', 'instructor', 'steward', 'admin'], group: 'everyone' },
  { label: 'Material requests', href: '/materials/requests', roles: ['steward', 'admin'], group: 'upkeep' },
  { label: 'Material rules', href: '/admin/materials', roles: ['admin'], group: 'admin' },
  { label: 'Admin', href: '/admin', roles: ['admin'], group: 'admin' },
  { label: 'Site', href: '/admin/site', roles: ['admin'], group: 'admin' },
  { label: 'Audit', href: '/admin/audit', roles: ['admin'], group: 'admin' },
  { label: 'Account', href: '/account', roles: ['member', 'instructor', 'steward', 'admin'], group: 'everyone' },
  { label: 'Pricing', href: '/admin/pricing', roles: ['admin'], group: 'admin' },
  { label: 'Book', href: '/book', roles: ['member', 'instructor', 'steward', 'admin'], group: 'everyone' },
  { label: 'Machines', href: '/admin/machines', roles: ['admin'], group: 'admin' },
  { label: 'Clearances', href: '/clearances', roles: ['member', 'instructor', 'steward'], group: 'everyone' },
  { label: 'Quizzes', href: '/quizzes', roles: ['instructor'], group: 'teaching' },
  { label: 'Sign-offs', href: '/signoffs', roles: ['instructor'], group: 'teaching' },
  { label: 'Machine groups', href: '/admin/machine-groups', roles: ['admin', 'instructor'], group: 'admin' },
  { label: 'Reports', href: '/reports', roles: ['admin', 'instructor'], group: 'admin' },
];

export function navFor(roles: readonly Role[]): NavItem[] {
  return NAV.filter((item) => hasAnyRole(roles, item.roles));
}

/** The one href of `items` to mark as current: the longest that is the page or a section above it. */
export function currentHref(items: readonly NavItem[], pathname: string): string | undefined {
  return items
    .filter((item) => isCurrent(item.href, pathname))
    .map((item) => item.href)
    .sort((a, b) => b.length - a.length)[0];
}

/** True when `href` is the current page or a section above it. */
export function isCurrent(href: string, pathname: string): boolean {
  return href === '/' ? pathname === '/' : pathname === href || pathname.startsWith(`${href}/`);
}
