import { Module } from '@nestjs/common';
import { StreamModule } from '../stream/stream.module.js';
import { PyrometryRecordsController } from './records.controller.js';
import { PyrometryRecordsService } from './records.service.js';
import { PyrometryTestsController } from './tests.controller.js';
import { PyrometryTestsService } from './tests.service.js';

/** Pyrometry and equipment records (issue 8): records, calibrations, tests, due lists, suspect product. */
@Module({
  imports: [StreamModule],
  controllers: [PyrometryRecordsController, PyrometryTestsController],
  providers: [PyrometryRecordsService, PyrometryTestsService],
  exports: [PyrometryRecordsService, PyrometryTestsService],
})
export class PyrometryModule {}
