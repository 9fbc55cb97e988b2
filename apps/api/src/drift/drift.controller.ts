import { Body, Controller, Get, Param, Put, Query } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { DriftChartQuery, DriftChartsSettings, DriftOverviewQuery, SpecVersionParams } from '@ausline/contracts';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseParams, parseQuery, UuidParam } from '../http/validation.js';
import { DriftQueryService } from './drift.service.js';

@ApiTags('drift')
@Controller()
export class DriftController {
  constructor(private readonly drift: DriftQueryService) {}

  @Get('drift')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Drift chart of one metric of a product spec on a line: Phase I lots, frozen limits (versioned), every Phase II point with its individuals, EWMA and CUSUM values, the signals and the episodes with their drift deviations',
    description:
      'Metrics: bainite-ceiling-margin, blocky-austenite-margin, predicted-hardness-p50, measured-hardness, bath-mean-temp-hold (one value per batch). ' +
      'status: collecting-phase-i (fewer lots than phaseILots and no specified limits), monitoring, phase-i-failed, not-applicable, disabled. ' +
      '`last` limits the returned points to the most recent N (signals and episodes stay complete; pointsFrom says where the points start).',
  })
  @ZodQuery(DriftChartQuery)
  @ApiErrors(400, 404)
  chart(@Query() query: unknown) {
    return this.drift.chart(parseQuery(DriftChartQuery, query));
  }

  @Get('drift/charts')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Every drift chart of a product spec (optionally one line) as the worker last evaluated it: status, limits version, lots, episodes' })
  @ZodQuery(DriftOverviewQuery)
  @ApiErrors(400, 404)
  overview(@Query() query: unknown) {
    const q = parseQuery(DriftOverviewQuery, query);
    return this.drift.overview(q.specId, q.lineId);
  }

  @Get('specs/:id/drift-charts')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Drift-chart settings of the spec version in force (the approved one, else the newest), as stored and resolved with the defaults' })
  @ApiErrors(400, 404)
  settings(@Param('id', UuidParam) id: string) {
    return this.drift.settingsInForce(id);
  }

  @Put('specs/:id/versions/:version/drift-charts')
  @Access({ roles: ['QUALITY'] })
  @ApiOperation({
    summary: 'Set the drift-chart settings of a DRAFT spec version (chart parameters per metric, Phase I lots, specified limits); the same body again is a no-op',
    description: 'Anything left out takes the documented default (libs/compliance drift/config.ts). An approved version cannot change: 409.',
  })
  @ZodBody(DriftChartsSettings)
  @ApiErrors(400, 404, 409)
  put(@Param() params: unknown, @Body() body: unknown) {
    const { id, version } = parseParams(SpecVersionParams, params);
    return this.drift.setSettings(id, version, parseBody(DriftChartsSettings, body));
  }
}
