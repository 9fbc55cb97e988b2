import swc from 'unplugin-swc';
import { defineConfig } from 'vitest/config';

// SWC emits decorator metadata, which NestJS dependency injection needs under vitest.
// The 'source' condition makes workspace imports (@ausline/*) resolve to TypeScript sources.
export default defineConfig({
  plugins: [swc.vite()],
  resolve: { conditions: ['source', 'import', 'module', 'node', 'default'] },
  ssr: { resolve: { conditions: ['source', 'import', 'node', 'default'], externalConditions: ['source'] } },
  test: {
    environment: 'node',
    include: ['libs/*/src/**/*.test.ts', 'apps/*/src/**/*.test.ts', 'apps/*/test/**/*.test.ts', 'tests/**/*.test.ts'],
    testTimeout: 30_000,
    hookTimeout: 30_000,
  },
});
