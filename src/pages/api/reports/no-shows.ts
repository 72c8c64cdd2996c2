import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/no-shows?from=&to=&machineId= (JSON; see src/lib/server/reports.ts). */
export const GET = reportRoute('no-shows', 'json');
