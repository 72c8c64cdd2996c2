import { describe, expect, it } from 'vitest';
import { hasAnyRole, isRole, normaliseRoles } from '../../src/lib/roles';
import { isCurrent, navFor } from '../../src/lib/nav';
import { safeCallback } from '../../src/lib/server/guards';

describe('roles', () => {
  it('recognises only the four roles', () => {
    expect(['member', 'instructor', 'steward', 'admin'].every(isRole)).toBe(true);
    expect(isRole('Admin')).toBe(false);
    expect(isRole('owner')).toBe(false);
    expect(isRole(undefined)).toBe(false);
  });

  it('a person may hold several roles; any one of the wanted roles is enough', () => {
    expect(hasAnyRole(['member', 'steward'], ['steward', 'admin'])).toBe(true);
    expect(hasAnyRole(['member'], ['steward', 'admin'])).toBe(false);
    expect(hasAnyRole(null, ['member'])).toBe(false);
    expect(hasAnyRole([], [])).toBe(false);
  });

  it('normalises to the canonical order without repeats or unknown names', () => {
    expect(normaliseRoles(['admin', 'member', 'admin', 'root'])).toEqual(['member', 'admin']);
  });
});

describe('navigation', () => {
  it('shows each person only the screens of their roles', () => {
    const member = navFor(['member']).map((n) => n.href);
    const admin = navFor(['admin']).map((n) => n.href);
    expect(member).toContain('/');
    expect(member).not.toContain('/admin/people');
    expect(admin).toContain('/admin/people');
  });

  it('marks the current section', () => {
    expect(isCurrent('/', '/')).toBe(true);
    expect(isCurrent('/', '/admin/people')).toBe(false);
    expect(isCurrent('/admin/people', '/admin/people/123')).toBe(true);
    expect(isCurrent('/admin/people', '/admin/peoplex')).toBe(false);
  });
});

describe('safeCallback', () => {
  it('keeps paths on this site', () => {
    expect(safeCallback('/m/laser-a?x=1')).toBe('/m/laser-a?x=1');
  });
  it.each(['https://evil.example/', '//evil.example/x', '/\\evil.example', 'javascript:alert(1)', '', null, undefined, 'x'.repeat(3000)])(
    'refuses %s',
    (raw) => {
      expect(safeCallback(raw as string)).toBe('/');
    },
  );
});
