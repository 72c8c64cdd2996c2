import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/clearances.csv?from=&to=&machineId= (CSV: the rows of the JSON report). */
export const GET = reportRoute('clearances', 'csv');
