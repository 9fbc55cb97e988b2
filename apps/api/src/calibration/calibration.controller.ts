import { Controller, Get, Param } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors } from '../http/openapi.js';
import { UuidParam } from '../http/validation.js';
import { CalibrationQueryService } from './calibration.service.js';

@ApiTags('calibration')
@Controller()
export class CalibrationController {
  constructor(private readonly calibration: CalibrationQueryService) {}

  @Get('specs/:id/calibration')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Running lab calibration of a product: bias and spread of measured − predicted p50 per quantity (hardness HV, tensile Rm, retained austenite), every lab comparison, and how much the latest bands narrowed or moved',
  })
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string) {
    return this.calibration.forSpec(id);
  }
}
