import { z } from '@lib/zod';
import { json, readJson, readQuery, requireRole, route } from '@lib/server/http';
import { awaitingInvitation, invitePerson } from '@lib/server/accounts';
import { listPeople } from '@lib/server/people';
import { email, page, pageSize, personName, role, searchText } from '@lib/schemas';
import { TIERS } from '@lib/vocabulary';

const query = z.object({
  q: searchText,
  role: role.optional(),
  page,
  pageSize,
  sort: z.enum(['name', 'email', 'created']).default('name'),
  dir: z.enum(['asc', 'desc']).default('asc'),
});

/** GET /api/people?q=&role=&page=&pageSize=&sort=&dir= (admin) → a page of people with their roles (and `awaitingInvitation`: invited, no password chosen yet). */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const opts = readQuery(url, query);
  const { rows, total } = await listPeople(opts);
  const invited = await awaitingInvitation(rows.map((p) => p.id));
  return json({
    total,
    page: opts.page,
    pageSize: opts.pageSize,
    rows: rows.map((p) => ({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active, createdAt: p.createdAt.toISOString(), tier: p.tier, costCentre: p.costCentre, awaitingInvitation: invited.has(p.id) })),
  });
});

const invite = z.object({ name: personName, email, roles: z.array(role).max(4).default(['member']), tier: z.enum(TIERS, { error: `A tier is one of ${TIERS.join(', ')}.` }).optional() }).strict();

/** POST /api/people (admin) {name, email, roles, tier?} → 201: the person is created without a password and e-mailed an invitation link to set one; 409 `email_taken`. */
export const POST = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, invite);
  const p = await invitePerson(admin.id, input);
  return json({ id: p.id, email: p.email, name: p.name, roles: p.roles, active: p.active, createdAt: p.createdAt.toISOString(), tier: p.tier, costCentre: p.costCentre }, 201);
});
