import { z } from 'zod';
import { json, readQuery, requireRole, route } from '../../../lib/server/http';
import { listPeople } from '../../../lib/server/people';
import { page, pageSize, role, searchText } from '../../../lib/schemas';

const query = z.object({
  q: searchText,
  role: role.optional(),
  page,
  pageSize,
  sort: z.enum(['name', 'email', 'created']).default('name'),
  dir: z.enum(['asc', 'desc']).default('asc'),
});

/** GET /api/people?q=&role=&page=&pageSize=&sort=&dir= (admin) → a page of people with their roles. */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const opts = readQuery(url, query);
  const { rows, total } = await listPeople(opts);
  return json({
    total,
    page: opts.page,
    pageSize: opts.pageSize,
    rows: rows.map((p) => ({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active, createdAt: p.createdAt.toISOString(), tier: p.tier, costCentre: p.costCentre })),
  });
});
