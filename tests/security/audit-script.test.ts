/**
 * scripts/audit.mjs, the CI dependency audit (issue 7, item 5). The npm audit service is not
 * reachable from this network (POST /-/npm/v1/security/advisories/bulk answers 405), so the verdicts
 * are checked against npm's answers replayed by a stand-in `npm` (NPM=...): the report format is npm's
 * `audit --json` version 2 (npm 7 and later). One test runs the real npm: whatever the network says,
 * the script must end with a verdict or the clear "not done" warning, never a crash.
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';

const SCRIPT = join(import.meta.dirname, '../../scripts/audit.mjs');
const dir = mkdtempSync(join(tmpdir(), 'ausline-audit-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Runs the script with a stand-in npm that prints `output` and exits with `exitCode`. */
function audit(output: unknown, exitCode: number, env: Record<string, string> = {}): { status: number | null; stdout: string; stderr: string; args: string } {
  const name = `npm-${Math.random().toString(36).slice(2)}`;
  const outFile = join(dir, `${name}.json`);
  const argsFile = join(dir, `${name}.args`);
  writeFileSync(outFile, typeof output === 'string' ? output : JSON.stringify(output));
  const fake = join(dir, name);
  writeFileSync(fake, `#!/bin/sh\necho "$@" > '${argsFile}'\ncat '${outFile}'\nexit ${exitCode}\n`);
  chmodSync(fake, 0o755);
  const run = spawnSync(process.execPath, [SCRIPT], { encoding: 'utf8', env: { PATH: process.env.PATH ?? '', NPM: fake, ...env } });
  let args = '';
  try {
    args = spawnSync('cat', [argsFile], { encoding: 'utf8' }).stdout.trim();
  } catch {
    // not written
  }
  return { status: run.status, stdout: run.stdout, stderr: run.stderr, args };
}

function report(vulnerabilities: Record<string, { severity: string; via: unknown[]; range?: string; fixAvailable?: boolean }>) {
  const counts = { info: 0, low: 0, moderate: 0, high: 0, critical: 0, total: 0 };
  for (const v of Object.values(vulnerabilities)) {
    counts[v.severity as keyof typeof counts] += 1;
    counts.total += 1;
  }
  return {
    auditReportVersion: 2,
    vulnerabilities: Object.fromEntries(Object.entries(vulnerabilities).map(([name, v]) => [name, { name, isDirect: false, effects: [], nodes: [`node_modules/${name}`], fixAvailable: false, ...v }])),
    metadata: { vulnerabilities: counts, dependencies: { prod: 143, dev: 402, optional: 12, peer: 0, peerOptional: 0, total: 545 } },
  };
}

describe('scripts/audit.mjs', () => {
  it('asks npm for runtime dependencies only, at the high threshold, as JSON', () => {
    const run = audit(report({}), 0);
    expect(run.args).toBe('audit --omit=dev --audit-level=high --json');
    expect(run.status).toBe(0);
    expect(run.stdout).toMatch(/Runtime dependencies audited: 143; advisories: critical 0, high 0, moderate 0, low 0\./);
    expect(run.stdout).toMatch(/^OK: no high or critical advisory/m);
  });

  it('fails (1) on a high or critical advisory, naming the package, the advisory and the path', () => {
    const run = audit(
      report({
        'path-to-regexp': { severity: 'high', range: '<0.1.10', via: [{ source: 1101850, name: 'path-to-regexp', title: 'path-to-regexp outputs backtracking regular expressions', url: 'https://github.com/advisories/GHSA-9wv6-86v2-598j', severity: 'high' }], fixAvailable: true },
        express: { severity: 'high', via: ['path-to-regexp'] },
        cookie: { severity: 'low', via: [{ title: 'cookie accepts out of bounds characters', url: 'https://github.com/advisories/GHSA-pxg6-pf52-xh8x', severity: 'low' }] },
      }),
      1,
    );
    expect(run.status).toBe(1);
    expect(run.stdout).toMatch(/high\s+path-to-regexp <0\.1\.10: path-to-regexp outputs backtracking regular expressions \(https:\/\/github\.com\/advisories\/GHSA-9wv6-86v2-598j\) — fix available/);
    expect(run.stdout).toMatch(/high\s+express \(through path-to-regexp\)/);
    expect(run.stdout).toMatch(/Below the threshold[\s\S]*low\s+cookie/);
  });

  it('passes (0) with moderate and low advisories only, listing them', () => {
    const run = audit(report({ cookie: { severity: 'moderate', via: [{ title: 'x', url: 'https://example.invalid/a' }] } }), 0);
    expect(run.status).toBe(0);
    expect(run.stdout).toMatch(/moderate cookie: x/);
  });

  it('says the audit was NOT done, and passes, when the service refuses or cannot be reached; AUDIT_STRICT=1 fails (3)', () => {
    const refused = {
      message: '405 Method Not Allowed - POST https://registry.npmjs.org/-/npm/v1/security/advisories/bulk',
      method: 'POST',
      uri: 'https://registry.npmjs.org/-/npm/v1/security/advisories/bulk',
      statusCode: 405,
      body: '',
      error: { summary: '', detail: '' },
    };
    const run = audit(refused, 1);
    expect(run.status).toBe(0);
    expect(run.stdout).toMatch(/^WARNING: dependency audit NOT done: .*405 Method Not Allowed/m);
    expect(audit(refused, 1, { AUDIT_STRICT: '1' }).status).toBe(3);
    const offline = audit({ error: { code: 'ENOTFOUND', summary: 'request to https://registry.npmjs.org/-/npm/v1/security/advisories/bulk failed, reason: getaddrinfo ENOTFOUND registry.npmjs.org', detail: '' } }, 1);
    expect(offline.status).toBe(0);
    expect(offline.stdout).toMatch(/NOT done.*ENOTFOUND/);
  });

  it('fails (2) when npm itself fails for another reason (no lockfile, garbage output)', () => {
    const noLock = audit({ error: { code: 'ENOLOCK', summary: 'This command requires an existing lockfile.', detail: 'Try creating one first with: npm i --package-lock-only' } }, 1);
    expect(noLock.status).toBe(2);
    expect(noLock.stderr).toMatch(/ENOLOCK: This command requires an existing lockfile/);
    expect(audit('npm ERR! something odd', 1).status).toBe(2);
  });

  it('with the real npm: a verdict or the "not done" warning, never a crash', { timeout: 240_000 }, () => {
    const run = spawnSync(process.execPath, [SCRIPT], { encoding: 'utf8', cwd: join(import.meta.dirname, '../..'), timeout: 230_000 });
    expect([0, 1], `${run.stdout}\n${run.stderr}`).toContain(run.status);
    expect(run.stdout).toMatch(/^(OK: no high or critical|High or critical advisories|WARNING: dependency audit NOT done)/m);
  });
});
