/**
 * The last line of .ci/run: "N passed, N failed", from vitest's JSON report and vitest's exit status.
 *
 *   node --conditions=source --import tsx scripts/ci-summary.ts REPORT.json EXIT_STATUS
 *
 * vitest's numFailedTests counts failed tests only. A test file whose top-level code or beforeAll throws
 * (a missing service, a bad import) fails without any failed test: its tests are never run or are
 * skipped. Each such file counts as one failure here. And the line never says "0 failed" for a run whose
 * exit status says it failed (an unhandled error, a type error before vitest ran, a missing report).
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** The parts of vitest's JSON report (the jest-compatible shape) this summary reads. */
export interface VitestJsonReport {
  numPassedTests: number;
  numFailedTests: number;
  testResults?: Array<{
    name: string;
    status: string;
    message?: string;
    assertionResults?: Array<{ status: string }>;
  }>;
}

export interface CiSummary {
  passed: number;
  failed: number;
  line: string;
}

/** `report` undefined: vitest wrote none (it did not run, or crashed). */
export function summarizeVitestRun(report: VitestJsonReport | undefined, exitStatus: number): CiSummary {
  const passed = report?.numPassedTests ?? 0;
  const failedTests = report?.numFailedTests ?? 0;
  const filesFailedWithoutFailedTest = (report?.testResults ?? []).filter(
    (file) => file.status === 'failed' && !(file.assertionResults ?? []).some((test) => test.status === 'failed'),
  ).length;
  let failed = failedTests + filesFailedWithoutFailedTest;
  if (exitStatus !== 0 && failed === 0) failed = 1;
  return { passed, failed, line: `${passed} passed, ${failed} failed` };
}

/** Reads the report; a missing or unreadable one is "no report". */
export function readVitestReport(path: string): VitestJsonReport | undefined {
  try {
    const parsed: unknown = JSON.parse(readFileSync(path, 'utf8'));
    if (typeof parsed !== 'object' || parsed === null) return undefined;
    const report = parsed as Partial<VitestJsonReport>;
    if (typeof report.numPassedTests !== 'number' || typeof report.numFailedTests !== 'number') return undefined;
    return report as VitestJsonReport;
  } catch {
    return undefined;
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  const [reportPath, statusText] = process.argv.slice(2);
  const exitStatus = Number(statusText);
  if (!reportPath || statusText === undefined || !Number.isInteger(exitStatus)) {
    console.error('usage: ci-summary.ts REPORT.json EXIT_STATUS');
    process.exit(2);
  }
  const report = readVitestReport(reportPath);
  const summary = summarizeVitestRun(report, report ? exitStatus : exitStatus || 1);
  console.log(summary.line);
}
