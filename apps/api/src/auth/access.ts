import { applyDecorators, createParamDecorator, SetMetadata, type ExecutionContext } from '@nestjs/common';
import { ApiBearerAuth, ApiExtension, ApiSecurity } from '@nestjs/swagger';
import { ApiErrors } from '../http/openapi.js';

/**
 * Who may call an endpoint. Every route handler carries exactly one @Access; the global AccessGuard
 * denies any handler without it, and tests/auth-matrix.test.ts checks each declaration against
 * apps/api/src/auth/endpoint-matrix.ts by calling the endpoint as every kind of caller.
 */

export type Role = 'METALLURGIST' | 'QUALITY' | 'ADMIN';
export const ALL_ROLES: readonly Role[] = ['METALLURGIST', 'QUALITY', 'ADMIN'];
/** "Any signed-in user": every role. Users without any role are not let in anywhere. */
export const ANY_ROLE: Role[] = [...ALL_ROLES];

export type KeyScope = 'EQUIPMENT' | 'LAB';

export type Principal =
  | {
      kind: 'user';
      userId: string;
      email: string;
      roles: Role[];
      /** The session the request came with (logout and password change act on it). */
      sessionId: string;
    }
  | {
      kind: 'apiKey';
      keyId: string;
      scope: KeyScope;
      equipmentIds: string[];
      /** The key's public prefix (the part before the dot): safe to log and to put in audit trails. */
      prefix: string;
    };

export interface AccessRule {
  /** Users holding at least one of these roles may call. */
  roles?: Role[];
  /** API keys of these scopes may call. */
  keys?: KeyScope | KeyScope[];
  /** Anyone may call, signed in or not (login, health, metrics). */
  public?: true;
  /**
   * Route parameter holding an equipment id that an EQUIPMENT key must be scoped to
   * (e.g. 'id' for POST /v1/equipment/:id/samples). LAB keys and users are not affected.
   */
  equipmentParam?: string;
}

export const ACCESS_METADATA = 'ausline:access';

/** Declares who may call the handler (see AccessRule). Also documents it in the OpenAPI description. */
export function Access(rule: AccessRule): MethodDecorator & ClassDecorator {
  const keys = normalizeKeys(rule.keys);
  const decorators = [SetMetadata(ACCESS_METADATA, rule), ApiExtension('x-access', describeRule(rule))];
  if (!rule.public && (rule.roles?.length ?? 0) > 0) decorators.push(ApiBearerAuth('session'));
  if (!rule.public && keys.length > 0) decorators.push(ApiSecurity('apiKey'));
  if (!rule.public) decorators.push(ApiErrors(401, 403));
  return applyDecorators(...decorators);
}

export function normalizeKeys(keys: AccessRule['keys']): KeyScope[] {
  if (keys === undefined) return [];
  return Array.isArray(keys) ? keys : [keys];
}

function describeRule(rule: AccessRule): Record<string, unknown> {
  if (rule.public) return { public: true };
  return {
    roles: rule.roles ?? [],
    keys: normalizeKeys(rule.keys),
    ...(rule.equipmentParam ? { equipmentParam: rule.equipmentParam } : {}),
  };
}

/** The request property where the guard leaves the authenticated caller. */
export const PRINCIPAL_PROPERTY = 'principal';

export interface RequestWithPrincipal {
  [PRINCIPAL_PROPERTY]?: Principal;
}

/**
 * The authenticated caller. On a public endpoint it is undefined unless valid credentials were sent;
 * everywhere else the guard has already rejected requests without one.
 */
export const CurrentPrincipal = createParamDecorator((_data: unknown, ctx: ExecutionContext): Principal | undefined => {
  return ctx.switchToHttp().getRequest<RequestWithPrincipal>()[PRINCIPAL_PROPERTY];
});

/** 'user:<email>' or 'apikey:<prefix>': how audit trails name a principal (never a secret). */
export function actorName(principal: Principal): string {
  return principal.kind === 'user' ? `user:${principal.email}` : `apikey:${principal.prefix}`;
}
