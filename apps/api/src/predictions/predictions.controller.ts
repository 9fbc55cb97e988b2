import { Body, Controller, Get, HttpCode, Param, Post, Query } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { HeatAdviceRequest, HeatDiagramQuery } from '@ausline/contracts';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseQuery, UuidParam } from '../http/validation.js';
import { PredictionsService } from './predictions.service.js';

@ApiTags('predictions')
@Controller()
export class PredictionsController {
  constructor(private readonly predictions: PredictionsService) {}

  @Get('batches/:id/predictions')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Stored predictions of a batch, newest version first (the rolling latest, then one kept per milestone: into bath, ceiling reached, out of bath, verdict change)',
    description:
      'Each row: version, model version, input digest, watermark (device time of the last bath reading used), phase, milestone and `result` ' +
      '(the `ausline predict` output plus verdicts, overall, hold advice, bainite band and basis; libs/contracts PredictionResult). Never the engine state.',
  })
  @ApiErrors(400, 404)
  list(@Param('id', UuidParam) id: string) {
    return this.predictions.forBatch(id);
  }

  @Post('heats/:id/advice')
  @HttpCode(200)
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Heat advice: the bath temperature window and minimum hold meeting every criterion of a spec with 95 % confidence, with the limiting reason at each edge, and the receipt check (chemistry against the spec limits, hardenability against the section)',
    description:
      'Body: `specId` (its approved version in force) or `specVersionId`; optional `section` (default: the spec\'s prediction.section, else the section of the heat\'s latest batch on the spec), ' +
      '`agitation`, `lineId` (calibrated bath heat transfer) and `uncertainty` ({samples, seed}; default 1000 / 1, the batches\' ensemble). Read-only; computed, not stored.',
  })
  @ZodBody(HeatAdviceRequest)
  @ApiErrors(400, 404, 422)
  advice(@Param('id', UuidParam) id: string, @Body() body: unknown) {
    return this.predictions.advice(id, parseBody(HeatAdviceRequest, body ?? {}));
  }

  @Get('heats/:id/diagram')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: "A heat's transformation diagram: T0/T0′ rows (as `ausline t0` prints them), Ae3 against carbon, Ae1, Bs, Ms, the austenite's carbon and, with a spec, the advised bath window",
  })
  @ZodQuery(HeatDiagramQuery)
  @ApiErrors(400, 404, 422)
  diagram(@Param('id', UuidParam) id: string, @Query() query: unknown) {
    return this.predictions.diagram(id, parseQuery(HeatDiagramQuery, query));
  }
}
