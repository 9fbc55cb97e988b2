import { Body, Controller, Get, HttpCode, Post } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { ChangePasswordRequest, LoginRequest } from '@ausline/contracts';
import { ApiErrors, ZodBody } from '../http/openapi.js';
import { parseBody } from '../http/validation.js';
import { Access, ANY_ROLE, CurrentPrincipal, type Principal } from './access.js';
import { AuthService, type IssuedSession, type PublicUser } from './auth.service.js';

@ApiTags('auth')
@Controller()
export class AuthController {
  constructor(private readonly auth: AuthService) {}

  @Post('auth/login')
  @HttpCode(200)
  @Access({ public: true })
  @ApiOperation({ summary: 'Sign in with e-mail and password; returns a bearer session token (expires after SESSION_TTL_MIN)' })
  @ZodBody(LoginRequest)
  @ApiErrors(400, 401)
  login(@Body() body: unknown): Promise<IssuedSession> {
    const input = parseBody(LoginRequest, body);
    return this.auth.login(input.email, input.password);
  }

  @Post('auth/logout')
  @HttpCode(204)
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Revoke the session token of this request' })
  @ApiErrors(401)
  async logout(@CurrentPrincipal() principal: Principal): Promise<void> {
    if (principal.kind === 'user') await this.auth.logout(principal.sessionId);
  }

  @Get('me')
  @Access({ roles: ANY_ROLE, keys: ['EQUIPMENT', 'LAB'] })
  @ApiOperation({ summary: 'Who am I: the signed-in user, or the API key (scope and equipment) the request came with' })
  @ApiErrors(401)
  async me(@CurrentPrincipal() principal: Principal): Promise<{ kind: 'user'; user: PublicUser } | MeKey> {
    if (principal.kind === 'user') return { kind: 'user', user: await this.auth.currentUser(principal.userId) };
    return { kind: 'apiKey', keyId: principal.keyId, prefix: principal.prefix, scope: principal.scope, equipmentIds: principal.equipmentIds };
  }

  @Post('me/password')
  @HttpCode(204)
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Change my password (needs the current one); signs out my other sessions' })
  @ZodBody(ChangePasswordRequest)
  @ApiErrors(400, 401)
  async changePassword(@CurrentPrincipal() principal: Principal, @Body() body: unknown): Promise<void> {
    const input = parseBody(ChangePasswordRequest, body);
    if (principal.kind !== 'user') return;
    await this.auth.changePassword(principal.userId, principal.sessionId, input.currentPassword, input.newPassword);
  }
}

interface MeKey {
  kind: 'apiKey';
  keyId: string;
  prefix: string;
  scope: 'EQUIPMENT' | 'LAB';
  equipmentIds: string[];
}
