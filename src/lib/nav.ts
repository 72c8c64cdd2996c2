/**
 * The screens in the navigation, and who sees each. A screen appears here once it exists; its page
 * checks the same roles on the server (see src/lib/server/guards.ts).
 */
import { hasAnyRole, type Role } from './roles';

export interface NavItem {
  label: string;
  href: string;
  roles: Role[];
  group: 'everyone' | 'teaching' | 'upkeep' | 'admin' | 'reports';
}

const ALL: Role[] = ['member', 'instructor', 'steward', 'admin'];

/**
 * In the order they are shown. `everyone` screens form the main row; the screens of the teaching, upkeep and
 * admin roles form a second row, one labelled group each.
 */
export const NAV: NavItem[] = [
  { label: 'Floor', href: '/', roles: ALL, group: 'everyone' },
  { label: 'Book', href: '/book', roles: ALL, group: 'everyone' },
  { label: 'Clearances', href: '/clearances', roles: ['member', 'instructor', 'steward'], group: 'everyone' },
  { label: 'Materials', href: '/materials', roles: ALL, group: 'everyone' },
  { label: 'Hazard sheets', href: '/hazard', roles: ALL, group: 'everyone' },
  { label: 'Account', href: '/account', roles: ALL, group: 'everyone' },
  { label: 'Quizzes', href: '/quizzes', roles: ['instructor'], group: 'teaching' },
  { label: 'Sign-offs', href: '/signoffs', roles: ['instructor'], group: 'teaching' },
  { label: 'Faults', href: '/faults', roles: ['steward', 'admin'], group: 'upkeep' },
  { label: 'Upkeep', href: '/upkeep', roles: ['steward', 'admin'], group: 'upkeep' },
  { label: 'Material requests', href: '/materials/requests', roles: ['steward', 'admin'], group: 'upkeep' },
  { label: 'Badges', href: '/badges', roles: ['steward', 'admin'], group: 'upkeep' },
  { label: 'Overview', href: '/admin', roles: ['admin'], group: 'admin' },
  { label: 'People', href: '/admin/people', roles: ['admin'], group: 'admin' },
  { label: 'Machines', href: '/admin/machines', roles: ['admin'], group: 'admin' },
  { label: 'QR labels', href: '/admin/labels', roles: ['admin'], group: 'admin' },
  { label: 'Machine groups', href: '/admin/machine-groups', roles: ['admin', 'instructor'], group: 'teaching' },
  { label: 'Pricing', href: '/admin/pricing', roles: ['admin'], group: 'admin' },
  { label: 'Material rules', href: '/admin/materials', roles: ['admin'], group: 'admin' },
  { label: 'Site', href: '/admin/site', roles: ['admin'], group: 'admin' },
  { label: 'Audit', href: '/admin/audit', roles: ['admin'], group: 'admin' },
  { label: 'Reconciliation', href: '/admin/reconciliation', roles: ['admin'], group: 'admin' },
  { label: 'Reports', href: '/reports', roles: ['admin', 'instructor'], group: 'reports' },
];

export const GROUP_LABELS: Record<NavItem['group'], string> = {
  everyone: 'Everyone',
  teaching: 'Training',
  upkeep: 'Machine care',
  admin: 'Site and people',
  reports: 'Reports',
};

/** The person's screens, split into the main row and the labelled groups of their other roles. */
export function navGroups(roles: readonly Role[]): { main: NavItem[]; groups: { group: NavItem['group']; label: string; items: NavItem[] }[] } {
  const items = navFor(roles);
  const groups = (['teaching', 'upkeep', 'admin', 'reports'] as const)
    .map((group) => ({ group, label: GROUP_LABELS[group], items: items.filter((i) => i.group === group) }))
    .filter((g) => g.items.length > 0);
  return { main: items.filter((i) => i.group === 'everyone'), groups };
}

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
