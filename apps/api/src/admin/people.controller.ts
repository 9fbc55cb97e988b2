import { Body, Controller, Get, HttpCode, Param, Post } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { CreateApiKeyRequest, CreateUserRequest } from '@ausline/contracts';
import { Access } from '../auth/access.js';
import type { PublicUser } from '../auth/auth.service.js';
import { ApiErrors, ZodBody } from '../http/openapi.js';
import { parseBody, UuidParam } from '../http/validation.js';
import { ApiKeysService, type ApiKeyView, type CreatedApiKey } from './api-keys.service.js';
import { UsersService, type CreatedUser } from './users.service.js';

@ApiTags('users and keys')
@Controller()
export class PeopleController {
  constructor(
    private readonly users: UsersService,
    private readonly keys: ApiKeysService,
  ) {}

  @Post('users')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({
    summary: 'Create a user with roles; without a password the reply carries a one-time password, shown once',
  })
  @ZodBody(CreateUserRequest)
  @ApiErrors(400, 409)
  createUser(@Body() body: unknown): Promise<CreatedUser> {
    return this.users.create(parseBody(CreateUserRequest, body));
  }

  @Get('users')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'All users (no password material)' })
  listUsers(): Promise<PublicUser[]> {
    return this.users.list();
  }

  @Post('users/:id/deactivate')
  @HttpCode(200)
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Deactivate a user and revoke their sessions (repeatable); the last active admin cannot be' })
  @ApiErrors(400, 404, 409)
  deactivateUser(@Param('id', UuidParam) id: string): Promise<PublicUser> {
    return this.users.deactivate(id);
  }

  @Post('api-keys')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({
    summary: 'Create an API key for a controller (EQUIPMENT scope, limited to its equipment) or a lab (LAB scope); the key is shown once',
  })
  @ZodBody(CreateApiKeyRequest)
  @ApiErrors(400, 409)
  createApiKey(@Body() body: unknown): Promise<CreatedApiKey> {
    return this.keys.create(parseBody(CreateApiKeyRequest, body));
  }

  @Get('api-keys')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'All API keys: prefix, label, scope, equipment, revocation; never the secret' })
  listApiKeys(): Promise<ApiKeyView[]> {
    return this.keys.list();
  }

  @Post('api-keys/:id/revoke')
  @HttpCode(200)
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Revoke an API key (repeatable; keeps the first revocation time)' })
  @ApiErrors(400, 404)
  revokeApiKey(@Param('id', UuidParam) id: string): Promise<ApiKeyView> {
    return this.keys.revoke(id);
  }
}
