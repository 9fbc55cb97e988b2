import { existsSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { configTableMarkdown } from '../../scripts/config-table.js';

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
});
