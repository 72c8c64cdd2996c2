/**
 * CSV exports, one way for every file: a UTF-8 byte-order mark (so spreadsheets read accents right), CRLF line
 * ends (RFC 4180), every text cell passed through `safeCell`, numbers as plain digits, money in major units with the
 * currency in the column's heading. Pure (no I/O).
 */
import { stringify } from 'csv-stringify/sync';
import { formatMinor } from './format';

export const BOM = '\uFEFF';

/**
 * A cell a spreadsheet would run as a formula (starting with =, +, -, @, a tab or a carriage return)
 * gets a leading apostrophe, so an exported name such as "=HYPERLINK(…)" stays text (common practice,
 * OWASP "CSV injection").
 */
export function safeCell(value: unknown): string {
  if (value === null || value === undefined) return '';
  const s = typeof value === 'string' ? value : typeof value === 'object' ? JSON.stringify(value) : String(value);
  return /^[=+\-@\t\r]/.test(s) ? `'${s}` : s;
}

/** A cell: finite numbers stay numbers (a negative number is not a formula), everything else is made safe text. */
function cell(value: unknown): string {
  if (typeof value === 'number' && Number.isFinite(value)) return String(value);
  if (value instanceof Date) return value.toISOString();
  return safeCell(value);
}

/** Rows as CSV text (CRLF, every cell through `cell`), for files written in parts; the file starts with `BOM`. */
export function csvRows(rows: readonly (readonly unknown[])[]): string {
  return stringify(rows.map((r) => r.map(cell)), { record_delimiter: 'windows' });
}

/** The whole file: BOM, the heading row, then the rows. */
export function toCsv(heading: readonly string[], rows: readonly (readonly unknown[])[]): string {
  return BOM + csvRows([heading, ...rows]);
}

/** An amount in minor units as a plain major-unit number for a spreadsheet: 123456 NZD → "1234.56", −5 → "-0.05". */
export function majorUnits(amountMinor: number, currency: string): string {
  return formatMinor(amountMinor, currency).replace('−', '-');
}

/** A money column's heading with its currency: "net_minor" → "net (NZD)". */
export function moneyHeading(column: string, currency: string): string {
  return `${column.replace(/_minor$/, '')} (${currency.toUpperCase()})`;
}

/** HTTP headers of a CSV download. */
export function csvHeaders(filename: string): Record<string, string> {
  return {
    'content-type': 'text/csv; charset=utf-8',
    'content-disposition': `attachment; filename="${filename.replace(/[^A-Za-z0-9._-]/g, '_')}"`,
    'cache-control': 'no-store',
  };
}
