import { defineConfig } from 'vite';

/**
 * The dashboard builds to static files (apps/dashboard/dist) that the API serves at its root
 * (apps/api/src/dashboard). Build: `npx vite build apps/dashboard`. For development against a running
 * API on :3000: `npx vite apps/dashboard` (the dev server proxies /v1 to it).
 */
export default defineConfig({
  base: '/',
  build: {
    outDir: 'dist',
    emptyOutDir: true,
    target: 'es2022',
    sourcemap: true,
    // One small app: keep chart.js in its own chunk so app changes do not invalidate it.
    chunkSizeWarningLimit: 600,
  },
  server: {
    proxy: { '/v1': { target: 'http://127.0.0.1:3000', changeOrigin: false } },
  },
});
