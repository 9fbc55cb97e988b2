/** Injection token of the loaded configuration (loadConfig from @ausline/contracts). */
export const WORKER_CONFIG = Symbol('WORKER_CONFIG');
/** Injection token of the resolved runtime options below. */
export const WORKER_OPTIONS = Symbol('WORKER_OPTIONS');

export interface WorkerRuntimeOptions {
  /** Port of the /metrics and /health endpoint; null = no HTTP endpoint (tests), 0 = any free port. */
  metricsPort: number | null;
  metricsHost: string;
  /** File touched on every reconcile tick so a container healthcheck can see the worker is alive; null = none. */
  aliveFile: string | null;
  /** Run the reconciler (stale batches, in-progress batches) on its interval. */
  reconcile: boolean;
  /** How far back a CHARGED event may lie for the batch to count as in progress (re-evaluated by time). */
  inProgressWithinMs: number;
  /** Evaluate in-progress batches every this many reconcile ticks. */
  inProgressEveryTicks: number;
  /** Uncertainty ensemble of the metallurgical prediction: samples (1,000 in production) and seed. */
  prediction: { samples: number; seed: number };
}

/** Production ensemble size of the batch predictions (issue 3: 1,000 uncertainty samples). */
export const DEFAULT_PREDICTION_SAMPLES = 1000;
