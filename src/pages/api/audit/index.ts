import { json, readQuery, requireRole, route } from '@lib/server/http';
import { listAudit } from '@lib/server/audit';
import { getSettings } from '@lib/server/settings';
import { auditPageQuery, toAuditFilter } from '@lib/audit-filter';

/**
 * GET /api/audit?actor=&kind=&q=&from=&to=&page=&pageSize=&sort=&dir= (admin) → a page of the audit
 * log. `from` and `to` are whole days (YYYY-MM-DD) in the site's time zone, both included. Read only:
 * no route changes or removes an audit row.
 */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const query = readQuery(url, auditPageQuery);
  const { timeZone } = await getSettings();
  const { rows, total } = await listAudit({ ...toAuditFilter(query, timeZone), page: query.page, pageSize: query.pageSize, sort: query.sort, dir: query.dir });
  return json({
    total,
    page: query.page,
    pageSize: query.pageSize,
    timeZone,
    rows: rows.map((r) => ({ ...r, at: r.at.toISOString() })),
  });
});
