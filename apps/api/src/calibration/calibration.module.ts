import { Module } from '@nestjs/common';
import { CalibrationController } from './calibration.controller.js';
import { CalibrationQueryService } from './calibration.service.js';

/** Lab results against predictions (issue 4 item 5): the product's running calibration and its effect. */
@Module({ controllers: [CalibrationController], providers: [CalibrationQueryService] })
export class CalibrationModule {}
