/**
 * docker-compose.yml and the Dockerfile are never run here (no Docker engine), so check them by reading:
 * the services exist with healthchecks, the app services set only variables loadConfig knows and every
 * one it requires, their values pass loadConfig, and the Dockerfile copies every workspace manifest.
 */
import { existsSync, readFileSync, readdirSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { CONFIG_VARIABLES, loadConfig } from '@ausline/contracts';
import { DEMO_ENVIRONMENT } from '../../apps/line-sim/src/demo-environment.js';

const root = fileURLToPath(new URL('../../', import.meta.url));
const compose = parse(readFileSync(`${root}docker-compose.yml`, 'utf8')) as {
  services: Record<string, Service>;
  volumes?: Record<string, unknown>;
};
const dockerfile = readFileSync(`${root}Dockerfile`, 'utf8');

interface Service {
  image?: string;
  build?: string | { context: string };
  command?: string[] | string;
  environment?: Record<string, string | number | boolean | null> | string[];
  healthcheck?: { test: string[] | string };
  depends_on?: Record<string, { condition: string }> | string[];
  ports?: string[];
  volumes?: string[];
}

/** Services that run our api or worker: they are configured through loadConfig. */
const APP_SERVICES = Object.entries(compose.services)
  .filter(([, s]) => s.build !== undefined && /apps\/(api|worker)\//.test(([] as string[]).concat(s.command ?? []).join(' ')))
  .map(([name]) => name);

function environmentOf(service: Service): Record<string, string> {
  const env = service.environment ?? {};
  if (Array.isArray(env)) {
    return Object.fromEntries(env.map((entry) => {
      const eq = entry.indexOf('=');
      return eq < 0 ? [entry, ''] : [entry.slice(0, eq), entry.slice(eq + 1)];
    }));
  }
  return Object.fromEntries(Object.entries(env).map(([k, v]) => [k, v === null ? '' : String(v)]));
}

describe('docker-compose.yml', () => {
  it('has postgres 15, redis 7, api and worker', () => {
    expect(Object.keys(compose.services)).toEqual(expect.arrayContaining(['postgres', 'redis', 'api', 'worker']));
    expect(compose.services.postgres!.image).toBe('postgres:15');
    expect(compose.services.redis!.image).toBe('redis:7');
    expect(APP_SERVICES).toEqual(expect.arrayContaining(['api', 'worker']));
  });

  it('gives every service a healthcheck, and app services wait for healthy dependencies', () => {
    for (const [name, service] of Object.entries(compose.services)) {
      expect(service.healthcheck?.test, `${name} healthcheck`).toBeDefined();
    }
    for (const name of APP_SERVICES) {
      const deps = compose.services[name]!.depends_on as Record<string, { condition: string }>;
      expect(deps.postgres?.condition, name).toBe('service_healthy');
      expect(deps.redis?.condition, name).toBe('service_healthy');
    }
  });

  it('sets in app services only variables loadConfig knows, and every required one', () => {
    const known = new Set(CONFIG_VARIABLES.map((v) => v.name as string));
    const required = CONFIG_VARIABLES.filter((v) => v.required).map((v) => v.name);
    expect(required).toEqual(expect.arrayContaining(['DATABASE_URL', 'REDIS_URL']));
    for (const name of APP_SERVICES) {
      const env = environmentOf(compose.services[name]!);
      const unknown = Object.keys(env).filter((key) => !known.has(key));
      expect(unknown, `${name} sets variables loadConfig does not read`).toEqual([]);
      for (const variable of required) expect(env[variable], `${name} must set ${variable}`).toBeTruthy();
    }
  });

  it('app service values pass loadConfig and point at the compose services', () => {
    for (const name of APP_SERVICES) {
      const config = loadConfig(environmentOf(compose.services[name]!));
      expect(new URL(config.DATABASE_URL).hostname, name).toBe('postgres');
      expect(new URL(config.REDIS_URL).hostname, name).toBe('redis');
    }
    const api = loadConfig(environmentOf(compose.services.api!));
    const worker = loadConfig(environmentOf(compose.services.worker!));
    // Producer and consumer must use the same BullMQ keys.
    expect(worker.QUEUE_PREFIX).toBe(api.QUEUE_PREFIX);
  });

  it('database credentials of the app services match the postgres service', () => {
    const pgEnv = environmentOf(compose.services.postgres!);
    for (const name of APP_SERVICES) {
      const url = new URL(environmentOf(compose.services[name]!).DATABASE_URL!);
      expect(decodeURIComponent(url.username)).toBe(pgEnv.POSTGRES_USER);
      expect(decodeURIComponent(url.password)).toBe(pgEnv.POSTGRES_PASSWORD);
      expect(url.pathname).toBe(`/${pgEnv.POSTGRES_DB}`);
    }
  });

  it('publishes the api port and probes the api readiness endpoint on it', () => {
    const api = compose.services.api!;
    const port = loadConfig(environmentOf(api)).PORT;
    expect(api.ports).toContain(`${port}:${port}`);
    const probe = ([] as string[]).concat(api.healthcheck!.test).join(' ');
    expect(probe).toContain(`http://127.0.0.1:${port}/health/ready`);
  });

  it('runs migrations before starting each app, using built files the Dockerfile produces', () => {
    for (const name of APP_SERVICES) {
      const command = ([] as string[]).concat(compose.services[name]!.command ?? []).join(' ');
      expect(command, name).toMatch(/node libs\/db\/dist\/bin\/migrate\.js && exec node apps\/\w+\/dist\/main\.js/);
      const app = /apps\/(\w+)\/dist\/main\.js/.exec(command)![1]!;
      // The entry compiles from src/main.ts, and the Dockerfile builds that app.
      expect(existsSync(`${root}apps/${app}/package.json`), `${name}: apps/${app}`).toBe(true);
      expect(dockerfile).toMatch(new RegExp(`tsc -b [^\\n]*apps/${app}`));
    }
    expect(existsSync(`${root}libs/db/src/bin/migrate.ts`)).toBe(true);
    expect(dockerfile).toMatch(/tsc -b libs\/db/);
  });

  it('runs the demo plant against the api service, with only variables the demo reads', () => {
    const sim = compose.services.sim!;
    expect(sim.build, 'sim runs our image').toBeDefined();
    expect(APP_SERVICES).not.toContain('sim');
    const command = ([] as string[]).concat(sim.command ?? []);
    expect(command.slice(0, 2)).toEqual(['node', 'apps/line-sim/dist/demo.js']);
    // The image builds it; the api it attaches to is the compose service on the api's port.
    expect(dockerfile).toMatch(/tsc -b [^\n]*apps\/line-sim/);
    const apiPort = loadConfig(environmentOf(compose.services.api!)).PORT;
    expect(command[command.indexOf('--attach') + 1]).toBe(`http://api:${apiPort}`);
    expect(command[command.indexOf('--public-url') + 1]).toBe(`http://localhost:${apiPort}`);
    const env = environmentOf(sim);
    const known = new Set<string>(DEMO_ENVIRONMENT);
    expect(Object.keys(env).filter((key) => !known.has(key)), 'sim sets variables the demo does not read').toEqual([]);
    // create-admin writes to the api's database.
    expect(env.DATABASE_URL).toBe(environmentOf(compose.services.api!).DATABASE_URL);
    // Its keys and passwords survive a restart: the state directory is a named volume.
    expect(sim.volumes).toContain(`simstate:${env.AUSLINE_DEMO_STATE_DIR}`);
    expect(dockerfile).toMatch(new RegExp(`mkdir -p ${env.AUSLINE_DEMO_STATE_DIR} && chown node:node ${env.AUSLINE_DEMO_STATE_DIR}`));
    const deps = sim.depends_on as Record<string, { condition: string }>;
    expect(deps.api?.condition).toBe('service_healthy');
  });

  it('declares the named volumes it mounts', () => {
    const declared = Object.keys(compose.volumes ?? {});
    for (const [name, service] of Object.entries(compose.services)) {
      for (const mount of service.volumes ?? []) {
        const source = mount.split(':')[0]!;
        if (!source.startsWith('.') && !source.startsWith('/')) expect(declared, `${name}: ${source}`).toContain(source);
      }
    }
  });
});

describe('Dockerfile', () => {
  it('is a multi-stage node:20 build that installs from the lockfile', () => {
    expect(dockerfile).toMatch(/^FROM node:20[\w.-]* AS build$/m);
    expect(dockerfile).toMatch(/^FROM node:20[\w.-]* AS runtime$/m);
    expect(dockerfile).toMatch(/RUN npm ci\b/);
    expect(dockerfile).toMatch(/COPY package\.json package-lock\.json/);
    expect(dockerfile).toMatch(/COPY --from=build .*prisma\/migrations/);
  });

  it('builds the dashboard the api serves (unconditionally: apps/dashboard is not a workspace)', () => {
    expect(existsSync(`${root}apps/dashboard/index.html`)).toBe(true);
    expect(dockerfile).toMatch(/^ && npm run build:dashboard \\$/m);
    expect(dockerfile.indexOf('npm run build:dashboard')).toBeLessThan(dockerfile.indexOf('npm prune'));
  });

  it('copies the manifest of every workspace before npm ci (else npm ci fails in the image)', () => {
    const workspaces = ['apps', 'libs'].flatMap((group) =>
      readdirSync(`${root}${group}`, { withFileTypes: true })
        .filter((d) => d.isDirectory() && existsSync(`${root}${group}/${d.name}/package.json`))
        .map((d) => `${group}/${d.name}`),
    );
    expect(workspaces.length).toBeGreaterThanOrEqual(6);
    const npmCi = dockerfile.indexOf('RUN npm ci');
    for (const workspace of workspaces) {
      const copy = dockerfile.indexOf(`COPY ${workspace}/package.json ${workspace}/`);
      expect(copy, `Dockerfile must COPY ${workspace}/package.json`).toBeGreaterThanOrEqual(0);
      expect(copy, `${workspace}/package.json must be copied before npm ci`).toBeLessThan(npmCi);
    }
  });
});
