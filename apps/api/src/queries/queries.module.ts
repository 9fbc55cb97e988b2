import { Module } from '@nestjs/common';
import { StreamModule } from '../stream/stream.module.js';
import { BatchQueriesService } from './batch-queries.service.js';
import { DeviationsController } from './deviations.controller.js';
import { DeviationsService } from './deviations.service.js';

/** Read side (deviations list/detail, batch list/detail) and the deviation lifecycle actions. */
@Module({
  imports: [StreamModule],
  controllers: [DeviationsController],
  providers: [DeviationsService, BatchQueriesService],
  exports: [BatchQueriesService],
})
export class QueriesModule {}
