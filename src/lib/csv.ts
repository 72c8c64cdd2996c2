/** Helpers for CSV exports. Pure (no I/O). */

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
