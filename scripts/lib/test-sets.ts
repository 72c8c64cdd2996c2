/**
 * Helpers of scripts/test.ts for running vitest in two passes (decision record 0415): each pass writes its own JSON
 * report next to the one asked for, and the two are joined into the file asked for, so `--outputFile=x.json` still
 * gives one report of the whole run.
 */
import fs from 'node:fs';

/** `--outputFile=x` / `--outputFile x` in the arguments: the file, and the arguments of a pass writing `x.<set>.json`. */
export function outputFileFor(args: string[]): { file: string; fileFor: (set: string) => string; argsFor: (set: string) => string[] } | undefined {
  const i = args.findIndex((a) => a === '--outputFile' || a.startsWith('--outputFile='));
  if (i < 0) return undefined;
  const arg = args[i]!;
  const file = arg.includes('=') ? arg.slice(arg.indexOf('=') + 1) : args[i + 1];
  if (!file) return undefined;
  const fileFor = (set: string) => file.replace(/(\.json)?$/, `.${set}$1`);
  const argsFor = (set: string) => {
    const copy = [...args];
    if (arg.includes('=')) copy[i] = `--outputFile=${fileFor(set)}`;
    else copy[i + 1] = fileFor(set);
    return copy;
  };
  return { file, fileFor, argsFor };
}

interface JsonReport {
  numTotalTestSuites: number;
  numPassedTestSuites: number;
  numFailedTestSuites: number;
  numPendingTestSuites: number;
  numTotalTests: number;
  numPassedTests: number;
  numFailedTests: number;
  numPendingTests: number;
  numTodoTests: number;
  startTime: number;
  success: boolean;
  testResults: unknown[];
  [k: string]: unknown;
}

/** Joins the passes' JSON reports (vitest's json reporter) into `file`; a pass file that is not such a report is left as it is. */
export function mergeJsonReports(file: string, parts: string[]): void {
  const reports: JsonReport[] = [];
  for (const p of parts) {
    if (!fs.existsSync(p)) return;
    try {
      const r = JSON.parse(fs.readFileSync(p, 'utf8')) as JsonReport;
      if (!Array.isArray(r.testResults)) return;
      reports.push(r);
    } catch {
      return;
    }
  }
  if (!reports.length) return;
  const sum = (k: keyof JsonReport) => reports.reduce((n, r) => n + Number(r[k] ?? 0), 0);
  const merged: JsonReport = {
    ...reports[0]!,
    numTotalTestSuites: sum('numTotalTestSuites'),
    numPassedTestSuites: sum('numPassedTestSuites'),
    numFailedTestSuites: sum('numFailedTestSuites'),
    numPendingTestSuites: sum('numPendingTestSuites'),
    numTotalTests: sum('numTotalTests'),
    numPassedTests: sum('numPassedTests'),
    numFailedTests: sum('numFailedTests'),
    numPendingTests: sum('numPendingTests'),
    numTodoTests: sum('numTodoTests'),
    startTime: Math.min(...reports.map((r) => r.startTime)),
    success: reports.every((r) => r.success),
    testResults: reports.flatMap((r) => r.testResults),
  };
  fs.writeFileSync(file, JSON.stringify(merged));
  for (const p of parts) fs.rmSync(p, { force: true });
}
