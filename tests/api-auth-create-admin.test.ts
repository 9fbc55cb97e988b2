/**
 * `npm run create-admin` as an operator runs it: a child process against a fresh database; the
 * printed one-time password signs in through the API.
 */
import { execFile } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { prismaOf } from '../apps/api/test/support/principals.js';
import { startTestApi } from '../apps/api/test/support/test-api.js';

const { api, db } = await startTestApi('create-admin');
const repoRoot = fileURLToPath(new URL('..', import.meta.url));

function runCreateAdmin(args: string[], env: Record<string, string> = { DATABASE_URL: db.url }) {
  return new Promise<{ code: number; stdout: string; stderr: string }>((resolve) => {
    execFile(
      process.execPath,
      ['--conditions=source', '--import', 'tsx', 'apps/api/src/cli/create-admin.ts', ...args],
      { cwd: repoRoot, env: { PATH: process.env.PATH ?? '', ...env }, timeout: 60_000 },
      (error, stdout, stderr) => resolve({ code: error ? Number(error.code ?? 1) : 0, stdout, stderr }),
    );
  });
}

async function login(email: string, password: string): Promise<number> {
  const res = await fetch(`${api.url}/v1/auth/login`, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ email, password }),
  });
  await res.text();
  return res.status;
}

function printedPassword(stdout: string): string {
  const lines = stdout.trim().split('\n');
  return lines[lines.length - 1]!.trim();
}

describe('create-admin', () => {
  let firstPassword: string;

  it('creates the first admin and prints a one-time password once; only its hash is stored', async () => {
    const run = await runCreateAdmin(['--email', 'Admin@Plant.test', '--name', 'Plant Admin']);
    expect(run.code, run.stderr).toBe(0);
    expect(run.stdout).toMatch(/^Created admin admin@plant\.test \(id [0-9a-f-]{36}\)\./);
    firstPassword = printedPassword(run.stdout);
    expect(firstPassword).toMatch(/^[A-Za-z0-9_-]{20}$/);
    expect(run.stdout.split(firstPassword)).toHaveLength(2); // printed exactly once
    const user = await prismaOf(api.app).user.findUniqueOrThrow({ where: { email: 'admin@plant.test' } });
    expect(user).toMatchObject({ roles: ['ADMIN'], active: true, displayName: 'Plant Admin' });
    expect(user.passwordHash).not.toContain(firstPassword);
    expect(await login('admin@plant.test', firstPassword)).toBe(200);
  });

  it('refuses a second admin while one is active (exit 1), and changes nothing', async () => {
    const run = await runCreateAdmin(['--email', 'second@plant.test']);
    expect(run.code).toBe(1);
    expect(run.stderr).toMatch(/already exists \(admin@plant\.test\)/);
    expect(run.stdout).toBe('');
    expect(await prismaOf(api.app).user.count()).toBe(1);
  });

  it('with --force resets an existing admin: new password, old one and old sessions void', async () => {
    const session = await fetch(`${api.url}/v1/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'admin@plant.test', password: firstPassword }),
    }).then((r) => r.json() as Promise<{ token: string }>);
    const run = await runCreateAdmin(['--email', 'admin@plant.test', '--force']);
    expect(run.code, run.stderr).toBe(0);
    expect(run.stdout).toMatch(/^Reset admin admin@plant\.test/);
    const newPassword = printedPassword(run.stdout);
    expect(newPassword).not.toBe(firstPassword);
    expect(await login('admin@plant.test', firstPassword)).toBe(401);
    expect(await login('admin@plant.test', newPassword)).toBe(200);
    const me = await fetch(`${api.url}/v1/me`, { headers: { authorization: `Bearer ${session.token}` } });
    expect(me.status).toBe(401);
  });

  it('exits 2 with usage on missing --email, and names a missing DATABASE_URL', async () => {
    const noEmail = await runCreateAdmin([]);
    expect(noEmail.code).toBe(2);
    expect(noEmail.stderr).toMatch(/--email is required/);
    const noDb = await runCreateAdmin(['--email', 'x@plant.test'], {});
    expect(noDb.code).toBe(2);
    expect(noDb.stderr).toMatch(/DATABASE_URL is not set/);
  });
});
