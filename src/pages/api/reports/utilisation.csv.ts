import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/utilisation.csv?from=&to=&machineId= (CSV: the rows of the JSON report). */
export const GET = reportRoute('utilisation', 'csv');
