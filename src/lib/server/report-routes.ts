/**
 * The ten report routes (`/api/reports/<name>` and `<name>.csv`) share one handler: role check, query
 * (period in the site's time zone, machines), the report from src/lib/server/reports.ts, then JSON or CSV.
 */
import type { APIRoute } from 'astro';
import { DomainError, json, readQuery, requireRole, route } from './http';
import { getSettings } from './settings';
import { clearanceReport, faultReport, noShowReport, revenueReport, type ReportScope } from './reports';
import { utilisationReport } from './utilisation-report';
import { COLUMNS, PeriodError, reportQuery, resolvePeriod, type ReportName } from '@lib/reports';
import { csvHeaders, majorUnits, moneyHeading, toCsv } from '@lib/csv';
import { zonedDate } from '@lib/time';

const RUN: Record<ReportName, (scope: ReportScope) => Promise<{ rows: object[]; totals: object }>> = {
  utilisation: utilisationReport,
  revenue: revenueReport,
  clearances: clearanceReport,
  faults: faultReport,
  'no-shows': noShowReport,
};

/** Who may read each report: admins all; instructors the clearance funnel (their teaching). */
export const REPORT_ROLES: Record<ReportName, ('admin' | 'instructor')[]> = {
  utilisation: ['admin'],
  revenue: ['admin'],
  clearances: ['admin', 'instructor'],
  faults: ['admin'],
  'no-shows': ['admin'],
};

export function reportRoute(name: ReportName, format: 'json' | 'csv'): APIRoute {
  return route(async ({ locals, url }) => {
    requireRole(locals, ...REPORT_ROLES[name]);
    const q = readQuery(url, reportQuery);
    const { timeZone, currency } = await getSettings();
    let period;
    try {
      period = resolvePeriod(q, zonedDate(new Date(), timeZone), timeZone);
    } catch (err) {
      if (err instanceof PeriodError) throw new DomainError('invalid', 'invalid', err.message, { [err.field]: err.message });
      throw err;
    }
    const report = await RUN[name]({ period, timeZone, ...(q.machineId ? { machineIds: q.machineId } : {}) });
    if (format === 'json') {
      return json({ report: name, period: { from: period.from, to: period.to, timeZone }, machineIds: q.machineId ?? null, ...report });
    }
    const columns = COLUMNS[name] as readonly string[];
    // money columns (`*_minor`) in major units, the currency in the heading; a currency column is then redundant
    const money = (c: string) => c.endsWith('_minor');
    const kept = columns.filter((c) => c !== 'currency');
    const lines = report.rows.map((row) => kept.map((c) => {
      const v = (row as Record<string, unknown>)[c];
      return money(c) && typeof v === 'number' ? majorUnits(v, currency) : v;
    }));
    const heading = kept.map((c) => (money(c) ? moneyHeading(c, currency) : c));
    return new Response(toCsv(heading, lines), { headers: csvHeaders(`beamwarden-${name}-${period.from}-to-${period.to}.csv`) });
  });
}
