import swc from 'unplugin-swc';
import { defineConfig } from 'vitest/config';

// SWC emits decorator metadata, which NestJS dependency injection needs under vitest.
// The 'source' condition makes workspace imports (@ausline/*) resolve to TypeScript sources.
export default defineConfig({
  plugins: [swc.vite()],
  resolve: { conditions: ['source', 'import', 'module', 'node', 'default'] },
  // No 'import' in the ssr conditions: forcing it makes CommonJS packages that require() a dual package
  // (pg -> pg-pool) get the ESM build, and `pg` then fails to load. Vite adds import/require by itself.
  ssr: { resolve: { conditions: ['source', 'node', 'default'], externalConditions: ['source'] } },
  test: {
    environment: 'node',
    include: ['libs/*/src/**/*.test.ts', 'apps/*/src/**/*.test.ts', 'apps/*/test/**/*.test.ts', 'tests/**/*.test.ts'],
    // Checks Postgres/Redis (fails at once with the start commands), builds the migrated template DB.
    globalSetup: ['tests/support/global-setup.ts'],
    testTimeout: 30_000,
    hookTimeout: 30_000,
  },
});
