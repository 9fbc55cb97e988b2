import { Inject, Module, type OnModuleInit } from '@nestjs/common';
import { HttpAdapterHost } from '@nestjs/core';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { JsonLogger } from '../http/logger.js';
import { SeriesController } from './series.controller.js';
import { SeriesService } from './series.service.js';
import { DEFAULT_DASHBOARD_DIR, dashboardFiles } from './static-files.js';

/**
 * The dashboard's side of the API: the built single-page app served at '/' (from DASHBOARD_DIR, else
 * apps/dashboard/dist when it exists), and the chart series endpoint GET /v1/batches/:id/series.
 *
 * The static handler is plain Express middleware, added when the module initialises: after Nest has
 * registered its routes and before its not-found handler, so it only ever answers paths no API route
 * owns. It is not a Nest route and so carries no @Access: the files are the public app shell; every
 * piece of plant data still comes through /v1 with a session.
 */
@Module({ controllers: [SeriesController], providers: [SeriesService] })
export class DashboardModule implements OnModuleInit {
  constructor(
    private readonly adapterHost: HttpAdapterHost,
    @Inject(API_CONFIG) private readonly config: ApiConfig,
    private readonly logger: JsonLogger,
  ) {}

  onModuleInit(): void {
    const adapter = this.adapterHost.httpAdapter;
    if (!adapter) return;
    const files = dashboardFiles(this.config.DASHBOARD_DIR ?? DEFAULT_DASHBOARD_DIR, this.config.PLANT_TIME_ZONE);
    (adapter.getInstance() as { use(handler: typeof files.handler): void }).use(files.handler);
    this.logger.event(files.built ? 'info' : 'warn', {
      msg: files.built ? 'dashboard served at /' : 'dashboard not built; / answers a hint page',
      dir: files.dir,
    });
  }
}
