import { Body, Controller, Get, Headers, HttpCode, Param, Post, Query, Res } from '@nestjs/common';
import { ApiBody, ApiConsumes, ApiOperation, ApiTags } from '@nestjs/swagger';
import { z } from 'zod';
import { Access, actorName, ANY_ROLE, CurrentPrincipal, type Principal } from '../auth/access.js';
import { ApiError, badRequest } from '../http/errors.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseQuery, UuidParam } from '../http/validation.js';
import { AccuracyTestInput, SurveyCsvQuery, SweepInput, UniformitySurveyInput } from './pyrometry.schemas.js';
import { PyrometryTestsService } from './tests.service.js';

interface StatusSettable {
  status(code: number): unknown;
}

const TESTERS = { roles: ['ADMIN', 'QUALITY'] as ('ADMIN' | 'QUALITY')[] };
const ListQuery = z.strictObject({ limit: z.coerce.number().int().min(1).max(500).default(100) });

function csvText(body: unknown, contentType: string | undefined): string {
  const mediaType = (contentType ?? '').split(';')[0]!.trim().toLowerCase();
  if (mediaType !== 'text/csv' && mediaType !== 'text/plain') {
    throw new ApiError(415, `Send the file as text/csv, not ${mediaType || 'no content type'}`, [{ path: 'headers.content-type', message: 'expected text/csv' }]);
  }
  if (typeof body !== 'string' || body.trim() === '') throw badRequest('Send the file as a text/csv body with a header row', [{ path: 'body', message: 'expected a non-empty text/csv body' }]);
  return body;
}

/**
 * Accuracy tests and uniformity surveys (issue 8): typed in as JSON or uploaded as CSV by admins or
 * quality, judged against the equipment's reference set (the verdict is computed, never sent).
 */
@ApiTags('pyrometry')
@Controller()
export class PyrometryTestsController {
  constructor(private readonly tests: PyrometryTestsService) {}

  @Post('equipment/:id/accuracy-tests')
  @Access(TESTERS)
  @ApiOperation({
    summary: 'Record a system accuracy test; difference = corrected system reading − corrected test reading, judged against the class limit',
    description: 'A failing test opens a suspect-product deviation on every batch processed on the equipment since the last passing test of that sensor. Same test again: 200 "unchanged".',
  })
  @ZodBody(AccuracyTestInput)
  @ApiErrors(400, 404, 409, 422)
  async recordAccuracyTest(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.tests.recordAccuracyTest(id, parseBody(AccuracyTestInput, body), actorName(principal));
    res.status(out.outcome === 'created' ? 201 : 200);
    return out;
  }

  @Get('equipment/:id/accuracy-tests')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Accuracy tests of one piece of equipment, newest first, with inputs and results' })
  @ZodQuery(ListQuery)
  @ApiErrors(400)
  listAccuracyTests(@Param('id', UuidParam) id: string, @Query() query: unknown) {
    return this.tests.listAccuracyTests(id, parseQuery(ListQuery, query).limit);
  }

  @Post('pyrometry/accuracy-tests/import')
  @HttpCode(200)
  @Access(TESTERS)
  @ApiOperation({
    summary: 'Import accuracy tests from a CSV file (text/csv), all or nothing',
    description:
      'Columns (any order): equipment_id, sensor_id, tested_at, setpoint_c, instrument_reading_c, test_sensor_id, test_reading_c, and optionally test_instrument_id, tip_distance_mm. ' +
      'Ids may be our UUIDs or the equipment code / sensor and instrument serials. Instants are ISO 8601 with offset. Lines starting with # are notes. Any problem refuses the file; issue paths are rows.<row>.<column>.',
  })
  @ApiConsumes('text/csv')
  @ApiBody({ schema: { type: 'string', example: 'equipment_id,sensor_id,tested_at,setpoint_c,instrument_reading_c,test_sensor_id,test_reading_c\nF1,TC-Z1,2026-03-04T08:15:00Z,870,871.2,SAT-07,870.0\n' } })
  @ApiErrors(400, 409, 415, 422)
  importAccuracyTests(@Body() body: unknown, @Headers('content-type') contentType: string | undefined, @CurrentPrincipal() principal: Principal) {
    return this.tests.importAccuracyTests(csvText(body, contentType), actorName(principal));
  }

  @Post('equipment/:id/uniformity-surveys')
  @Access(TESTERS)
  @ApiOperation({
    summary: 'Record a uniformity survey at one setpoint; every corrected reading must lie within setpoint ± the class tolerance',
    description: 'A failing survey opens a suspect-product deviation on every batch processed on the equipment since the last passing survey.',
  })
  @ZodBody(UniformitySurveyInput)
  @ApiErrors(400, 404, 409, 422)
  async recordSurvey(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.tests.recordUniformitySurvey(id, parseBody(UniformitySurveyInput, body), actorName(principal));
    res.status(out.outcome === 'created' ? 201 : 200);
    return out;
  }

  @Post('equipment/:id/uniformity-surveys/import')
  @Access(TESTERS)
  @ApiOperation({
    summary: 'Import one uniformity survey from a CSV of readings (text/csv); ?setpointC= and optionally ?testInstrument=',
    description: 'Columns (any order): location_id, test_sensor_id, at, reading_c, one row per reading. Issue paths are rows.<row>.<column>.',
  })
  @ApiConsumes('text/csv')
  @ApiBody({ schema: { type: 'string', example: 'location_id,test_sensor_id,at,reading_c\nL1,TUS-01,2026-03-04T08:00:00Z,869.4\n' } })
  @ZodQuery(SurveyCsvQuery)
  @ApiErrors(400, 404, 409, 415, 422)
  async importSurvey(
    @Param('id', UuidParam) id: string,
    @Query() query: unknown,
    @Body() body: unknown,
    @Headers('content-type') contentType: string | undefined,
    @CurrentPrincipal() principal: Principal,
    @Res({ passthrough: true }) res: StatusSettable,
  ) {
    const q = parseQuery(SurveyCsvQuery, query);
    const out = await this.tests.importUniformitySurvey(id, csvText(body, contentType), { setpointC: q.setpointC, ...(q.testInstrument ? { testInstrument: q.testInstrument } : {}) }, actorName(principal));
    res.status(out.outcome === 'created' ? 201 : 200);
    return out;
  }

  @Get('equipment/:id/uniformity-surveys')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Uniformity surveys of one piece of equipment, newest first, with inputs and results' })
  @ZodQuery(ListQuery)
  @ApiErrors(400)
  listSurveys(@Param('id', UuidParam) id: string, @Query() query: unknown) {
    return this.tests.listUniformitySurveys(id, parseQuery(ListQuery, query).limit);
  }

  @Get('equipment/:id/suspect-triggers')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Failed or overdue tests that put product under suspect-product deviations, with the evidence and the batches' })
  @ApiErrors(400, 404)
  suspectTriggers(@Param('id', UuidParam) id: string) {
    return this.tests.suspectTriggers(id);
  }

  @Post('pyrometry/overdue-sweep')
  @HttpCode(200)
  @Access(TESTERS)
  @ApiOperation({ summary: 'Look for tests and calibrations run overdue now and open their suspect-product look-backs (all enrolled equipment, or {equipmentId})' })
  @ZodBody(SweepInput)
  @ApiErrors(400, 404, 422)
  sweep(@Body() body: unknown) {
    return this.tests.sweep(parseBody(SweepInput, body ?? {}).equipmentId);
  }
}
