import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/utilisation?from=&to=&machineId= (JSON; see src/lib/server/reports.ts). */
export const GET = reportRoute('utilisation', 'json');
