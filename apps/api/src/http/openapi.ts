import type { INestApplication } from '@nestjs/common';
import { applyDecorators } from '@nestjs/common';
import { ApiBody, ApiQuery, ApiResponse, DocumentBuilder, SwaggerModule } from '@nestjs/swagger';
import { z } from 'zod';

/**
 * OpenAPI document served at /docs (page) and /docs-json (document). Request schemas come straight
 * from the zod schemas in libs/contracts, so the documented shape is the validated shape:
 *
 *   @Post()
 *   @ZodBody(CreateLineRequest)
 *   @ApiErrors(400, 409)
 *   create(@Body() body: unknown) { const input = parseBody(CreateLineRequest, body); ... }
 */

type JsonSchema = Record<string, unknown>;

/** zod -> JSON schema in the OpenAPI 3.0 dialect; `io: 'input'` documents what clients send. */
export function jsonSchemaOf(schema: z.ZodType, io: 'input' | 'output' = 'input'): JsonSchema {
  const { $schema: _ignored, ...rest } = z.toJSONSchema(schema, { target: 'openapi-3.0', io, unrepresentable: 'any' }) as JsonSchema;
  return rest;
}

export function ZodBody(schema: z.ZodType, description?: string): MethodDecorator {
  return ApiBody({ schema: jsonSchemaOf(schema) as never, ...(description ? { description } : {}) });
}

/** Documents each property of a zod object schema as a query parameter. */
export function ZodQuery(schema: z.ZodObject): MethodDecorator {
  const json = jsonSchemaOf(schema) as { properties?: Record<string, JsonSchema>; required?: string[] };
  const required = new Set(json.required ?? []);
  return applyDecorators(
    ...Object.entries(json.properties ?? {}).map(([name, property]) =>
      ApiQuery({ name, required: required.has(name), schema: property as never }),
    ),
  );
}

export const ERROR_BODY_SCHEMA: JsonSchema = {
  type: 'object',
  required: ['statusCode', 'error', 'message', 'issues'],
  properties: {
    statusCode: { type: 'integer', example: 400 },
    error: { type: 'string', example: 'Bad Request' },
    message: { type: 'string', example: 'Invalid request body: samples.3.value: Invalid input: expected number, received string' },
    issues: {
      type: 'array',
      items: {
        type: 'object',
        required: ['path', 'message'],
        properties: { path: { type: 'string', example: 'samples.3.value' }, message: { type: 'string' } },
      },
    },
    requestId: { type: 'string', description: 'Also in the X-Request-Id response header; quote it when reporting a problem' },
  },
};

const ERROR_DESCRIPTIONS: Record<number, string> = {
  400: 'Invalid input: the issues name each field path and what is wrong',
  401: 'No credential, or an unknown, expired or revoked one',
  403: 'The caller may not do this (role, key scope or equipment)',
  404: 'Not found',
  409: 'Conflicts with what is stored (e.g. the code already exists)',
  413: 'Body larger than the limit',
  422: 'Well-formed but not acceptable in the current state',
};

/** Documents error replies (@Access adds 401 and 403 to every non-public endpoint itself). */
export function ApiErrors(...statuses: number[]): ReturnType<typeof applyDecorators> {
  return applyDecorators(
    ...statuses.map((status) =>
      ApiResponse({ status, description: ERROR_DESCRIPTIONS[status] ?? 'Error', schema: ERROR_BODY_SCHEMA as never }),
    ),
  );
}

export function setupOpenApi(app: INestApplication): void {
  const config = new DocumentBuilder()
    .setTitle('Ausline API')
    .setDescription(
      [
        'Heat-treatment plant data for austempering lines: controllers post furnace and bath logs, labs post heat chemistry and results, people review batches and work deviations.',
        '',
        'Authentication: people sign in with POST /v1/auth/login and send `Authorization: Bearer <token>`; controllers and labs send `Authorization: ApiKey <key>` or `X-Api-Key: <key>`.',
        'Each operation lists who may call it in its `x-access` extension (roles, key scopes, and the route parameter an equipment key must be scoped to).',
        'Every error reply has the shape {statusCode, error, message, issues[{path, message}], requestId}.',
      ].join('\n'),
    )
    .setVersion('1')
    .addBearerAuth({ type: 'http', scheme: 'bearer', description: 'Session token from POST /v1/auth/login' }, 'session')
    .addApiKey({ type: 'apiKey', in: 'header', name: 'X-Api-Key', description: 'Controller (EQUIPMENT) or lab (LAB) key' }, 'apiKey')
    .build();
  const document = SwaggerModule.createDocument(app, config);
  SwaggerModule.setup('docs', app, document, { jsonDocumentUrl: 'docs-json', yamlDocumentUrl: 'docs-yaml' });
}
