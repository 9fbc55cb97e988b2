import { Injectable, type CanActivate, type ExecutionContext } from '@nestjs/common';
import { Reflector } from '@nestjs/core';
import { forbidden, unauthorized } from '../http/errors.js';
import { ACCESS_METADATA, normalizeKeys, PRINCIPAL_PROPERTY, type AccessRule, type Principal, type RequestWithPrincipal } from './access.js';
import { AuthService } from './auth.service.js';

type Credential = { kind: 'session'; token: string } | { kind: 'apiKey'; key: string };

interface GuardedRequest extends RequestWithPrincipal {
  headers: Record<string, string | string[] | undefined>;
  params?: Record<string, string | undefined>;
}

/**
 * The global guard (registered as APP_GUARD). For every handler:
 *   - no @Access                      -> 403 (deny by default; the matrix test also fails)
 *   - public                          -> allowed; a valid credential still sets the principal
 *   - no credential                   -> 401
 *   - unknown/expired/revoked         -> 401
 *   - user without a listed role      -> 403
 *   - key of a scope not listed       -> 403
 *   - EQUIPMENT key not scoped to the equipment in rule.equipmentParam -> 403
 */
@Injectable()
export class AccessGuard implements CanActivate {
  constructor(
    private readonly reflector: Reflector,
    private readonly auth: AuthService,
  ) {}

  async canActivate(context: ExecutionContext): Promise<boolean> {
    if (context.getType() !== 'http') return true;
    const rule = this.reflector.getAllAndOverride<AccessRule | undefined>(ACCESS_METADATA, [context.getHandler(), context.getClass()]);
    const request = context.switchToHttp().getRequest<GuardedRequest>();

    if (!rule) throw forbidden('This endpoint declares no access rule, so nobody may call it');

    if (rule.public) {
      const credential = readCredential(request, /* strict */ false);
      if (credential) {
        const principal = await this.authenticate(credential);
        if (principal) request[PRINCIPAL_PROPERTY] = principal;
      }
      return true;
    }

    const credential = readCredential(request, true);
    if (!credential) {
      throw unauthorized('Authentication required: send "Authorization: Bearer <session token>" or "Authorization: ApiKey <key>"');
    }
    const principal = await this.authenticate(credential);
    if (!principal) {
      throw unauthorized(credential.kind === 'session' ? 'Session token is unknown or expired; sign in again' : 'API key is unknown or revoked');
    }
    request[PRINCIPAL_PROPERTY] = principal;
    authorize(rule, principal, request.params ?? {});
    return true;
  }

  private authenticate(credential: Credential): Promise<Principal | undefined> {
    return credential.kind === 'session' ? this.auth.authenticateSession(credential.token) : this.auth.authenticateApiKey(credential.key);
  }
}

/** Throws 403 unless the principal may call under the rule. Exported for unit tests. */
export function authorize(rule: AccessRule, principal: Principal, params: Record<string, string | undefined>): void {
  if (principal.kind === 'user') {
    const allowed = rule.roles ?? [];
    if (allowed.length === 0) throw forbidden('Only API keys may call this endpoint');
    if (!principal.roles.some((role) => allowed.includes(role))) {
      throw forbidden(`Requires the role ${allowed.join(' or ')}; you have ${principal.roles.length > 0 ? principal.roles.join(', ') : 'no role'}`);
    }
    return;
  }
  const keys = normalizeKeys(rule.keys);
  if (!keys.includes(principal.scope)) throw forbidden(`An API key of scope ${principal.scope} may not call this endpoint`);
  if (principal.scope === 'EQUIPMENT' && rule.equipmentParam !== undefined) {
    const equipmentId = params[rule.equipmentParam];
    if (equipmentId === undefined || !principal.equipmentIds.includes(equipmentId)) {
      throw forbidden(`This API key is not scoped to equipment ${equipmentId ?? '(none given)'}`);
    }
  }
}

function header(request: GuardedRequest, name: string): string | undefined {
  const value = request.headers[name];
  return Array.isArray(value) ? value[0] : value;
}

/**
 * Reads the one credential of a request. Strict mode (non-public endpoints) rejects ambiguous or
 * unsupported headers with 401; lenient mode ignores them.
 */
function readCredential(request: GuardedRequest, strict: boolean): Credential | undefined {
  const authorization = header(request, 'authorization')?.trim();
  const apiKeyHeader = header(request, 'x-api-key')?.trim();
  if (authorization && apiKeyHeader) {
    if (strict) throw unauthorized('Send one credential: either the Authorization header or X-Api-Key, not both');
    return undefined;
  }
  if (apiKeyHeader) return { kind: 'apiKey', key: apiKeyHeader };
  if (!authorization) return undefined;
  const match = /^(\S+)\s+(\S+)$/.exec(authorization);
  const scheme = match?.[1]?.toLowerCase();
  if (match && scheme === 'bearer') return { kind: 'session', token: match[2]! };
  if (match && scheme === 'apikey') return { kind: 'apiKey', key: match[2]! };
  if (strict) throw unauthorized('Unsupported Authorization header: use "Bearer <session token>" or "ApiKey <key>"');
  return undefined;
}
