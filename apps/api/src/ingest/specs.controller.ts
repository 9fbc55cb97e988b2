import { Body, Controller, Get, HttpCode, Param, Post, Res } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { ProductSpecCreate, ProductSpecVersionInput, SpecVersionParams } from '@ausline/contracts';
import type { ProductSpecVersion } from '@ausline/db';
import { Access, actorName, ANY_ROLE, CurrentPrincipal, type Principal } from '../auth/access.js';
import { ApiErrors, ZodBody } from '../http/openapi.js';
import { parseBody, parseParams, UuidParam } from '../http/validation.js';
import { Idempotent } from './idempotency.js';
import { countIngest } from './ingest-metrics.js';
import { SpecsService, type SpecCreateResult, type SpecWithVersions } from './specs.service.js';

interface StatusSettable {
  status(code: number): unknown;
}

@ApiTags('specs')
@Controller()
export class SpecsController {
  constructor(private readonly specs: SpecsService) {}

  @Post('specs')
  @Access({ roles: ['QUALITY'] })
  @ApiOperation({ summary: 'Create a product spec (a part family); the same code and values again is a no-op (200), other values 409' })
  @ZodBody(ProductSpecCreate)
  @ApiErrors(400, 409)
  async create(@Body() body: unknown, @Res({ passthrough: true }) res: StatusSettable): Promise<SpecCreateResult> {
    const result = await countIngest('spec', () => this.specs.create(parseBody(ProductSpecCreate, body)));
    res.status(result.outcome === 'created' ? 201 : 200);
    return result;
  }

  @Post('specs/:id/versions')
  @Access({ roles: ['QUALITY'] })
  @Idempotent('spec')
  @ApiOperation({
    summary: 'Add the next version of a product spec as DRAFT: chemistry limits, process window, acceptance criteria',
    description: 'Send an Idempotency-Key to make a retry safe: without one every post adds a version.',
  })
  @ZodBody(ProductSpecVersionInput)
  @ApiErrors(400, 404)
  addVersion(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal): Promise<ProductSpecVersion> {
    return countIngest('spec', () => this.specs.addVersion(id, parseBody(ProductSpecVersionInput, body), actorName(principal)));
  }

  @Post('specs/:id/versions/:version/approve')
  @HttpCode(200)
  @Access({ roles: ['QUALITY'] })
  @ApiOperation({
    summary: 'Approve a DRAFT version (QUALITY); the version in force before becomes SUPERSEDED. Approving it again is a no-op.',
  })
  @ApiErrors(400, 404, 409)
  approve(@Param() params: unknown, @CurrentPrincipal() principal: Principal): Promise<ProductSpecVersion> {
    const { id, version } = parseParams(SpecVersionParams, params);
    return this.specs.approve(id, version, actorName(principal));
  }

  @Get('specs')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'All product specs with their versions' })
  list(): Promise<SpecWithVersions[]> {
    return this.specs.list();
  }

  @Get('specs/:id')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'One product spec with its versions' })
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string): Promise<SpecWithVersions> {
    return this.specs.get(id);
  }
}
