import { existsSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { configTableMarkdown } from '../../scripts/config-table.js';
import { ENDPOINT_MATRIX } from '../../apps/api/src/auth/endpoint-matrix.js';

const readme = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');

describe('README', () => {
  it('carries the configuration table generated from CONFIG_VARIABLES (run scripts/config-table.ts to refresh it)', () => {
    const start = readme.indexOf('<!-- config-table:start -->');
    const end = readme.indexOf('<!-- config-table:end -->');
    expect(start, 'config-table markers').toBeGreaterThan(-1);
    expect(readme.slice(start + '<!-- config-table:start -->'.length, end).trim()).toBe(configTableMarkdown());
  });

  it('gives the test command that .ci/run calls', () => {
    expect(readme).toContain('npm ci && npm test');
    expect(readFileSync(new URL('../../.ci/run', import.meta.url), 'utf8')).toMatch(/npm test/);
  });

  it('links only files that exist, pictures of the tour included (PNG, as the browser tests save them)', () => {
    const links = [...readme.matchAll(/\]\(([^)#\s]+)\)/g)].map((m) => m[1]!).filter((l) => !/^[a-z]+:/.test(l));
    expect(links.length).toBeGreaterThan(5);
    for (const link of links) expect(existsSync(new URL(`../../${link}`, import.meta.url)), link).toBe(true);
    const pictures = [...readme.matchAll(/!\[[^\]]+\]\(([^)]+)\)/g)].map((m) => m[1]!);
    expect(pictures.length).toBeGreaterThanOrEqual(4);
    for (const picture of pictures) {
      const bytes = readFileSync(new URL(`../../${picture}`, import.meta.url));
      expect(bytes.subarray(1, 4).toString(), picture).toBe('PNG');
    }
  });

  it('has a roles table that agrees with the endpoint matrix, row by row', () => {
    const start = readme.indexOf('<!-- roles-table:start -->');
    const end = readme.indexOf('<!-- roles-table:end -->');
    expect(start, 'roles-table markers').toBeGreaterThan(-1);
    const rows = readme
      .slice(start, end)
      .split('\n')
      .filter((line) => line.startsWith('| ') && !line.startsWith('| What') && !line.startsWith('| ---'));
    expect(rows.length).toBeGreaterThanOrEqual(10);
    for (const row of rows) {
      const [what, endpoints, metallurgist, quality, admin, key] = row.split('|').slice(1, -1).map((c) => c.trim());
      const roles = [['METALLURGIST', metallurgist], ['QUALITY', quality], ['ADMIN', admin]]
        .filter(([, cell]) => cell === 'yes')
        .map(([role]) => role)
        .sort();
      const keyScope = key === 'no' ? [] : [key!.split(',')[0]!];
      const listed = [...endpoints!.matchAll(/`(GET|POST|PUT|PATCH|DELETE) ([^`]+)`/g)];
      expect(listed.length, what).toBeGreaterThan(0);
      for (const [, method, path] of listed) {
        const entry = ENDPOINT_MATRIX.find((e) => e.method === method && e.path === path);
        expect(entry, `${method} ${path}`).toBeDefined();
        const keys = entry!.access.keys === undefined ? [] : [entry!.access.keys].flat();
        expect({ roles: [...(entry!.access.roles ?? [])].sort(), keys }, `${what}: ${method} ${path}`).toEqual({ roles, keys: keyScope });
      }
    }
  });
});
