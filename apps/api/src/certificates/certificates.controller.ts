import { Controller, Get, Param } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors } from '../http/openapi.js';
import { UuidParam } from '../http/validation.js';
import { CertificatesService, LOT_DEFINITION } from './certificates.service.js';

@ApiTags('certificates')
@Controller()
export class CertificatesController {
  constructor(private readonly certificates: CertificatesService) {}

  @Get('batches/:id/certificate')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Certificate data of one batch: heat and chemistry (revision), spec version, process actually run, prediction bands and verdicts, lab results against the acceptance criteria, deviations with dispositions and signers, model version; deterministic JSON with a record digest',
  })
  @ApiErrors(400, 404)
  batch(@Param('id', UuidParam) id: string) {
    return this.certificates.forBatch(id);
  }

  @Get('lots/:lotKey/certificate')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Certificate data of a lot (every batch of one product spec and heat on one plant day), same content per batch plus a lot summary',
    description: `${LOT_DEFINITION} Put the key into the path URL-encoded (encodeURIComponent).`,
  })
  @ApiErrors(400, 404)
  lot(@Param('lotKey') lotKey: string) {
    return this.certificates.forLot(lotKey);
  }
}
