import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Inject, Injectable, type OnApplicationBootstrap, type OnApplicationShutdown } from '@nestjs/common';
import { WorkerLogger } from '../logger.js';
import { WORKER_OPTIONS, type WorkerRuntimeOptions } from '../worker-config.js';
import { WorkerMetrics } from './worker-metrics.js';

/**
 * The worker's only HTTP surface: GET /metrics (Prometheus text) and GET /health (liveness: the process
 * runs and its event loop answers). Disabled when metricsPort is null.
 */
@Injectable()
export class MetricsServer implements OnApplicationBootstrap, OnApplicationShutdown {
  private server: Server | null = null;
  private address: string | null = null;

  constructor(
    @Inject(WORKER_OPTIONS) private readonly options: WorkerRuntimeOptions,
    private readonly metrics: WorkerMetrics,
    private readonly logger: WorkerLogger,
  ) {}

  /** e.g. http://127.0.0.1:9464, or null when not listening. */
  get url(): string | null {
    return this.address;
  }

  async onApplicationBootstrap(): Promise<void> {
    if (this.options.metricsPort === null) return;
    const server = createServer((req, res) => {
      if (req.method === 'GET' && req.url === '/metrics') {
        this.metrics.registry.metrics().then(
          (body) => {
            res.writeHead(200, { 'content-type': this.metrics.registry.contentType });
            res.end(body);
          },
          (error: unknown) => {
            res.writeHead(500, { 'content-type': 'text/plain' });
            res.end(error instanceof Error ? error.message : 'metrics failed');
          },
        );
      } else if (req.method === 'GET' && req.url === '/health') {
        res.writeHead(200, { 'content-type': 'application/json' });
        res.end('{"status":"ok"}');
      } else {
        res.writeHead(404, { 'content-type': 'application/json' });
        res.end('{"statusCode":404,"error":"Not Found","message":"only GET /metrics and GET /health"}');
      }
    });
    await new Promise<void>((resolve, reject) => {
      server.once('error', reject);
      server.listen(this.options.metricsPort!, this.options.metricsHost, () => resolve());
    });
    this.server = server;
    const { port } = server.address() as AddressInfo;
    const host = this.options.metricsHost === '0.0.0.0' ? '127.0.0.1' : this.options.metricsHost;
    this.address = `http://${host}:${port}`;
    this.logger.event('info', { msg: 'worker metrics listening', url: this.address });
  }

  async onApplicationShutdown(): Promise<void> {
    const server = this.server;
    this.server = null;
    if (!server) return;
    server.closeAllConnections();
    await new Promise<void>((resolve) => server.close(() => resolve()));
  }
}
