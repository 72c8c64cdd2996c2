import { readQuery, requireRole, route } from '@lib/server/http';
import { iterateAudit } from '@lib/server/audit';
import type { AuditRow } from '@lib/audit-filter';
import { getSettings } from '@lib/server/settings';
import { auditFilterQuery, toAuditFilter } from '@lib/audit-filter';
import { BOM, csvHeaders, csvRows } from '@lib/csv';
import { isoLocal } from '@lib/time';
import { log } from '@lib/server/log';

/**
 * GET /api/audit.csv?actor=&kind=&q=&from=&to= (admin) → every audit row that matches the filter,
 * newest first, as CSV (UTF-8), streamed in batches. Times in the site's time zone and in UTC.
 */
export const GET = route(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const query = readQuery(url, auditFilterQuery);
  const { timeZone } = await getSettings();
  const rows = iterateAudit(toAuditFilter(query, timeZone));
  const header = [`time (${timeZone})`, 'time (UTC)', 'actor', 'actor id', 'kind', 'subject type', 'subject id', 'summary', 'before', 'after'];
  const line = (r: AuditRow) => [
    isoLocal(r.at, timeZone),
    r.at.toISOString(),
    r.actorName,
    r.actorId ?? '',
    r.kind,
    r.subjectType,
    r.subjectId,
    r.summary,
    r.before,
    r.after,
  ];
  const encoder = new TextEncoder();
  const body = new ReadableStream<Uint8Array>({
    start(controller) {
      controller.enqueue(encoder.encode(BOM + csvRows([header])));
    },
    async pull(controller) {
      const chunk: unknown[][] = [];
      try {
        while (chunk.length < 500) {
          const next = await rows.next();
          if (next.done) break;
          chunk.push(line(next.value));
        }
      } catch (err) {
        log.error({ event: 'error', route: '/api/audit.csv', err }, 'audit export failed');
        controller.error(err);
        return;
      }
      if (chunk.length) controller.enqueue(encoder.encode(csvRows(chunk)));
      if (chunk.length < 500) controller.close();
    },
    async cancel() {
      await rows.return(undefined);
    },
  });
  const stamp = new Date().toISOString().slice(0, 10);
  return new Response(body, { status: 200, headers: csvHeaders(`beamwarden-audit-${stamp}.csv`) });
});
