import { Module } from '@nestjs/common';
import { QueriesModule } from '../queries/queries.module.js';
import { BatchesController } from './batches.controller.js';
import { BatchesService } from './batches.service.js';
import { HeatsController } from './heats.controller.js';
import { HeatsService } from './heats.service.js';
import { IdempotencyInterceptor, IdempotencyStore } from './idempotency.js';
import { RecomputeQueue } from './recompute-queue.js';
import { SamplesController } from './samples.controller.js';
import { SamplesService } from './samples.service.js';
import { SpecsController } from './specs.controller.js';
import { SpecsService } from './specs.service.js';

/**
 * Ingest: heats (one or CSV), product specs, batches with load events and lab results, equipment
 * samples; the recompute producer and Idempotency-Key handling.
 */
@Module({
  imports: [QueriesModule],
  controllers: [HeatsController, SpecsController, BatchesController, SamplesController],
  providers: [HeatsService, SpecsService, BatchesService, SamplesService, RecomputeQueue, IdempotencyStore, IdempotencyInterceptor],
  exports: [RecomputeQueue],
})
export class IngestModule {}
