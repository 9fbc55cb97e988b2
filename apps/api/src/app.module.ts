import { Global, Module, type DynamicModule } from '@nestjs/common';
import { AdminModule } from './admin/admin.module.js';
import { API_CONFIG, type ApiConfig } from './app-config.js';
import { AuthModule } from './auth/auth.module.js';
import { CalibrationModule } from './calibration/calibration.module.js';
import { CertificatesModule } from './certificates/certificates.module.js';
import { DashboardModule } from './dashboard/dashboard.module.js';
import { DriftModule } from './drift/drift.module.js';
import { IngestModule } from './ingest/ingest.module.js';
import { JsonLogger } from './http/logger.js';
import { OpsModule } from './ops/ops.module.js';
import { PredictionsModule } from './predictions/predictions.module.js';
import { PrismaModule } from './prisma.provider.js';
import { PyrometryModule } from './pyrometry/pyrometry.module.js';
import { QueriesModule } from './queries/queries.module.js';
import { StreamModule } from './stream/stream.module.js';

/** Process-wide values every module may inject: the config (API_CONFIG) and the JSON logger. */
@Global()
@Module({})
class CoreModule {
  static with(config: ApiConfig, logger: JsonLogger): DynamicModule {
    return {
      module: CoreModule,
      providers: [
        { provide: API_CONFIG, useValue: config },
        { provide: JsonLogger, useValue: logger },
      ],
      exports: [API_CONFIG, JsonLogger],
    };
  }
}

/**
 * The API's root module. Feature modules go into the imports list below; every controller in them
 * is guarded by AccessGuard and must carry @Access and an entry in auth/endpoint-matrix.ts.
 */
@Module({})
export class AppModule {
  static forRoot(config: ApiConfig, logger: JsonLogger): DynamicModule {
    return {
      module: AppModule,
      imports: [
        CoreModule.with(config, logger),
        PrismaModule,
        AuthModule,
        OpsModule,
        AdminModule,
        // Feature modules (ingest, queries, stream) are added here.
        IngestModule,
        QueriesModule,
        StreamModule,
        PyrometryModule,
        DashboardModule,
        // Drift across lots, lab calibration, certificate data (issue 4 items 4, 5, 7; PC2).
        DriftModule,
        CalibrationModule,
        CertificatesModule,
        // Predictions, verdicts, hold advice read side, heat advice and diagram (issue 4 items 1–3, 6; PC1).
        PredictionsModule,
      ],
    };
  }
}
