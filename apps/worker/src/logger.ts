import type { LoggerService } from '@nestjs/common';
import type { AppConfig } from '@ausline/contracts';

type LogLevel = AppConfig['LOG_LEVEL'];
export type LogFields = Record<string, unknown>;

const RANK: Record<LogLevel, number> = { debug: 10, info: 20, warn: 30, error: 40, silent: 100 };

/**
 * Structured logs of the worker: one JSON object per line on stdout, the same shape as the api's
 * ({"time", "level", "msg", ...fields}). Also Nest's LoggerService, so framework messages match.
 */
export class WorkerLogger implements LoggerService {
  constructor(
    private readonly level: LogLevel = 'info',
    private readonly write: (line: string) => void = (line) => process.stdout.write(line),
  ) {}

  event(level: Exclude<LogLevel, 'silent'>, fields: LogFields): void {
    if (RANK[level] < RANK[this.level]) return;
    let line: string;
    try {
      line = JSON.stringify({ time: new Date().toISOString(), level, service: 'worker', ...fields });
    } catch {
      line = JSON.stringify({ time: new Date().toISOString(), level, service: 'worker', msg: String(fields['msg'] ?? 'unserializable log entry') });
    }
    this.write(line + '\n');
  }

  log(message: unknown, context?: string): void {
    this.event('info', nestFields(message, context));
  }
  error(message: unknown, stack?: string, context?: string): void {
    this.event('error', { ...nestFields(message, context), ...(stack ? { stack } : {}) });
  }
  warn(message: unknown, context?: string): void {
    this.event('warn', nestFields(message, context));
  }
  debug(message: unknown, context?: string): void {
    this.event('debug', nestFields(message, context));
  }
  verbose(message: unknown, context?: string): void {
    this.event('debug', nestFields(message, context));
  }
  fatal(message: unknown, context?: string): void {
    this.event('error', nestFields(message, context));
  }
}

function nestFields(message: unknown, context: unknown): LogFields {
  const msg = message instanceof Error ? message.message : typeof message === 'string' ? message : JSON.stringify(message);
  return typeof context === 'string' ? { msg, context } : { msg };
}

export const errorMessage = (error: unknown): string => (error instanceof Error ? error.message : String(error));
