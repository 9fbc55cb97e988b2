import { Controller, Get, Header, HttpCode, Res, VERSION_NEUTRAL } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { Access } from '../auth/access.js';
import { metricsRegistry } from './metrics.js';
import { OpsService, type Readiness } from './ops.service.js';

interface StatusResponse {
  status(code: number): StatusResponse;
  json(body: unknown): void;
}

/**
 * Liveness (the process answers), readiness (it can reach Postgres and Redis) and Prometheus
 * metrics. Unversioned and public, as orchestrators and scrapers expect; they reveal no plant data.
 */
@ApiTags('operations')
@Controller({ version: VERSION_NEUTRAL })
export class OpsController {
  constructor(private readonly ops: OpsService) {}

  @Get('health/live')
  @HttpCode(200)
  @Access({ public: true })
  @ApiOperation({ summary: 'Liveness: 200 while the process serves requests' })
  live(): { status: 'alive' } {
    return { status: 'alive' };
  }

  @Get('health/ready')
  @Access({ public: true })
  @ApiOperation({ summary: 'Readiness: 200 when Postgres and Redis answer, else 503 naming which does not' })
  async ready(@Res() res: StatusResponse): Promise<void> {
    const readiness: Readiness = await this.ops.readiness();
    res.status(readiness.status === 'ready' ? 200 : 503).json(readiness);
  }

  @Get('metrics')
  @Access({ public: true })
  @Header('Content-Type', metricsRegistry.contentType)
  @ApiOperation({ summary: 'Prometheus metrics (text exposition format)' })
  metrics(): Promise<string> {
    return metricsRegistry.metrics();
  }
}
