import { reportRoute } from '@lib/server/report-routes';

/** GET /api/reports/no-shows.csv?from=&to=&machineId= (CSV: the rows of the JSON report). */
export const GET = reportRoute('no-shows', 'csv');
