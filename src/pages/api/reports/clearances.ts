import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/clearances?from=&to=&machineId= (JSON; see src/lib/server/reports.ts). */
export const GET = reportRoute('clearances', 'json');
