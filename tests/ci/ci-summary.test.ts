/**
 * scripts/ci-summary.ts, the last line of .ci/run. The sample reports have the shape vitest's JSON reporter
 * writes (node_modules/vitest, JsonReporter.onTestRunEnd): a file whose top-level code throws is reported
 * with status "failed", its error in `message` and no assertion results; a file whose beforeAll throws has
 * its tests "skipped". The last test has vitest write such a report for real (three tiny files in a scratch
 * folder under test-output/) and checks the summary of it.
 */
import { execFile } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { afterAll, describe, expect, it } from 'vitest';
import { readVitestReport, summarizeVitestRun, type VitestJsonReport } from '../../scripts/ci-summary.js';

const run = promisify(execFile);
const REPO = join(import.meta.dirname, '../..');
const SCRIPT = join(REPO, 'scripts/ci-summary.ts');
const dir = mkdtempSync(join(tmpdir(), 'ausline-ci-summary-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const passedFile = { name: '/repo/tests/a.test.ts', status: 'passed', message: '', assertionResults: [{ status: 'passed' }, { status: 'passed' }] };
const fileWithFailedTest = { name: '/repo/tests/b.test.ts', status: 'failed', message: '', assertionResults: [{ status: 'passed' }, { status: 'failed' }] };
const topLevelThrew = { name: '/repo/tests/c.test.ts', status: 'failed', message: 'connect ECONNREFUSED 127.0.0.1:5432', assertionResults: [] };
const beforeAllThrew = { name: '/repo/tests/d.test.ts', status: 'failed', message: 'seed failed', assertionResults: [{ status: 'skipped' }, { status: 'skipped' }] };

function report(files: NonNullable<VitestJsonReport['testResults']>): VitestJsonReport {
  const tests = files.flatMap((f) => f.assertionResults ?? []);
  return {
    numPassedTests: tests.filter((t) => t.status === 'passed').length,
    numFailedTests: tests.filter((t) => t.status === 'failed').length,
    testResults: files,
  };
}

describe('summarizeVitestRun', () => {
  it('counts passed and failed tests of a clean run', () => {
    expect(summarizeVitestRun(report([passedFile]), 0).line).toBe('2 passed, 0 failed');
    expect(summarizeVitestRun(report([passedFile, fileWithFailedTest]), 1).line).toBe('3 passed, 1 failed');
  });

  it('counts a file whose top-level setup threw as a failure (vitest counts no failed test for it)', () => {
    const sample = report([passedFile, topLevelThrew]);
    expect(sample.numFailedTests).toBe(0);
    expect(summarizeVitestRun(sample, 1).line).toBe('2 passed, 1 failed');
  });

  it('counts a file whose beforeAll threw (its tests skipped) as a failure', () => {
    expect(summarizeVitestRun(report([passedFile, beforeAllThrew]), 1).line).toBe('2 passed, 1 failed');
  });

  it('does not count a file twice when it has failed tests of its own', () => {
    expect(summarizeVitestRun(report([fileWithFailedTest, topLevelThrew, beforeAllThrew]), 1).line).toBe('1 passed, 3 failed');
  });

  it('never says 0 failed when vitest exited non-zero', () => {
    // An unhandled error outside any test: every file passed, the run failed.
    expect(summarizeVitestRun(report([passedFile]), 1).line).toBe('2 passed, 1 failed');
    expect(summarizeVitestRun(undefined, 2).line).toBe('0 passed, 1 failed');
  });
});

describe('the script as .ci/run calls it', () => {
  async function summary(reportJson: string | undefined, status: number): Promise<string> {
    const path = join(dir, `${Math.random().toString(36).slice(2)}.json`);
    if (reportJson !== undefined) writeFileSync(path, reportJson);
    const { stdout } = await run(process.execPath, ['--import', 'tsx', SCRIPT, path, String(status)]);
    return stdout.trim();
  }

  it('prints one line from the report file and the exit status', async () => {
    expect(await summary(JSON.stringify(report([passedFile, topLevelThrew])), 1)).toBe('2 passed, 1 failed');
    expect(await summary(JSON.stringify(report([passedFile])), 0)).toBe('2 passed, 0 failed');
  });

  it('says 1 failed when the report is missing or unreadable, whatever the status', async () => {
    expect(await summary(undefined, 0)).toBe('0 passed, 1 failed');
    expect(await summary('{"numPassedTests": 3', 0)).toBe('0 passed, 1 failed');
  });
});

describe('over a report vitest really wrote', () => {
  it('counts a file that threw at the top level and one whose beforeAll threw, where numFailedTests says 0', async () => {
    // Inside the repository (test-output/ is ignored by git) so the sample files resolve vitest from node_modules.
    mkdirSync(join(REPO, 'test-output'), { recursive: true });
    const sample = mkdtempSync(join(REPO, 'test-output', 'ci-summary-'));
    try {
      writeFileSync(join(sample, 'vitest.config.mjs'), "export default { test: { include: ['*.test.mjs'] } };\n");
      writeFileSync(join(sample, 'ok.test.mjs'), "import { expect, it } from 'vitest';\nit('passes', () => expect(1).toBe(1));\n");
      writeFileSync(join(sample, 'throws.test.mjs'), "import { it } from 'vitest';\nthrow new Error('setup failed');\nit('never runs', () => {});\n");
      writeFileSync(join(sample, 'hook.test.mjs'), "import { beforeAll, it } from 'vitest';\nbeforeAll(() => { throw new Error('seed failed'); });\nit('skipped', () => {});\n");
      const reportPath = join(sample, 'report.json');
      const status = await run(process.execPath, [join(REPO, 'node_modules/vitest/vitest.mjs'), 'run', '--root', sample, '--reporter=json', `--outputFile.json=${reportPath}`], {
        cwd: sample,
        env: { ...process.env, NO_COLOR: '1' },
      }).then(
        () => 0,
        (error: { code?: number }) => error.code ?? 1,
      );
      expect(status).toBe(1);
      const report = readVitestReport(reportPath);
      expect(report).toMatchObject({ numPassedTests: 1, numFailedTests: 0 });
      expect(summarizeVitestRun(report, status).line).toBe('1 passed, 2 failed');
    } finally {
      rmSync(sample, { recursive: true, force: true });
    }
  }, 60_000);
});
