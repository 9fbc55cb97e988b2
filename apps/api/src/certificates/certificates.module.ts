import { Module } from '@nestjs/common';
import { CertificatesController } from './certificates.controller.js';
import { CertificatesService } from './certificates.service.js';

/** Certificate data per batch and per lot (issue 4 item 7), for the dashboard's printable page. */
@Module({ controllers: [CertificatesController], providers: [CertificatesService] })
export class CertificatesModule {}
