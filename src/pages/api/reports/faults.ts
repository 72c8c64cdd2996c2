import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/faults?from=&to=&machineId= (JSON; see src/lib/server/reports.ts). */
export const GET = reportRoute('faults', 'json');
