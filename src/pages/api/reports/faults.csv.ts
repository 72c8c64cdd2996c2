import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/faults.csv?from=&to=&machineId= (CSV: the rows of the JSON report). */
export const GET = reportRoute('faults', 'csv');
