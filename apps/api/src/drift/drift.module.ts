import { Module } from '@nestjs/common';
import { DriftController } from './drift.controller.js';
import { DriftQueryService } from './drift.service.js';

/** Drift across lots (issue 4 item 4): chart data for the dashboard and the per-spec chart settings. */
@Module({ controllers: [DriftController], providers: [DriftQueryService] })
export class DriftModule {}
