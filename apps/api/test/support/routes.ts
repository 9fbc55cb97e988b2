/**
 * What the running app really serves, for the endpoint-matrix test:
 *   registeredRoutes(app) - every route in the Express router (Nest handlers and SwaggerModule's)
 *   nestHandlers(app)     - every Nest controller handler with its full path and @Access rule
 */
import type { INestApplication } from '@nestjs/common';
import { RequestMethod, VERSION_NEUTRAL } from '@nestjs/common';
import { METHOD_METADATA, PATH_METADATA, VERSION_METADATA } from '@nestjs/common/constants.js';
import { DiscoveryService, MetadataScanner, ModulesContainer } from '@nestjs/core';
import { ACCESS_METADATA, type AccessRule } from '../../src/auth/access.js';

export interface RegisteredRoute {
  method: string;
  path: string;
}

interface ExpressLayer {
  route?: { path: unknown; methods: Record<string, boolean> };
}

export function registeredRoutes(app: INestApplication): RegisteredRoute[] {
  const express = app.getHttpAdapter().getInstance() as { router: { stack: ExpressLayer[] } };
  const routes: RegisteredRoute[] = [];
  for (const layer of express.router.stack) {
    if (!layer.route) continue;
    const paths = Array.isArray(layer.route.path) ? layer.route.path : [layer.route.path];
    for (const path of paths) {
      for (const [method, on] of Object.entries(layer.route.methods)) {
        if (on && method !== '_all') routes.push({ method: method.toUpperCase(), path: String(path) });
      }
    }
  }
  return routes;
}

export interface NestHandler {
  method: string;
  path: string;
  controller: string;
  handler: string;
  access: AccessRule | undefined;
}

/** Paths as URI versioning with defaultVersion '1' builds them: /v1/<controller>/<method> unless VERSION_NEUTRAL. */
export function nestHandlers(app: INestApplication, defaultVersion = '1'): NestHandler[] {
  // Built here rather than injected, so the app need not import DiscoveryModule for a test.
  const discovery = new DiscoveryService(app.get(ModulesContainer));
  const scanner = new MetadataScanner();
  const handlers: NestHandler[] = [];
  for (const wrapper of discovery.getControllers()) {
    const metatype = wrapper.metatype as (new (...args: never[]) => object) | undefined;
    if (!metatype) continue;
    const prototype = metatype.prototype as Record<string, unknown>;
    const controllerPaths = asArray(Reflect.getMetadata(PATH_METADATA, metatype) ?? '/');
    const controllerVersion = Reflect.getMetadata(VERSION_METADATA, metatype) as unknown;
    for (const name of scanner.getAllMethodNames(prototype)) {
      const fn = prototype[name] as object;
      const methodPaths = Reflect.getMetadata(PATH_METADATA, fn) as string | string[] | undefined;
      const requestMethod = Reflect.getMetadata(METHOD_METADATA, fn) as RequestMethod | undefined;
      if (methodPaths === undefined || requestMethod === undefined) continue;
      const version = (Reflect.getMetadata(VERSION_METADATA, fn) as unknown) ?? controllerVersion ?? defaultVersion;
      const versionPart = version === VERSION_NEUTRAL ? '' : `v${String(version)}`;
      const access = Reflect.getMetadata(ACCESS_METADATA, fn) ?? Reflect.getMetadata(ACCESS_METADATA, metatype);
      for (const controllerPath of controllerPaths) {
        for (const methodPath of asArray(methodPaths)) {
          handlers.push({
            method: RequestMethod[requestMethod],
            path: joinPath(versionPart, controllerPath, methodPath),
            controller: metatype.name,
            handler: name,
            access: access as AccessRule | undefined,
          });
        }
      }
    }
  }
  return handlers;
}

function asArray<T>(value: T | T[]): T[] {
  return Array.isArray(value) ? value : [value];
}

function joinPath(...parts: string[]): string {
  const joined = parts
    .map((p) => p.replace(/^\/+|\/+$/g, ''))
    .filter((p) => p !== '')
    .join('/');
  return `/${joined}`;
}
