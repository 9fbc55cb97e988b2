import type { LoggerService } from '@nestjs/common';
import type { LogLevel } from '../app-config.js';

/**
 * Structured logs: one JSON object per line on stdout, e.g.
 *   {"time":"2026-12-01T10:00:00.000Z","level":"info","msg":"request","method":"POST","path":"/v1/lines",...}
 * Nothing that could carry a credential is ever passed in: no headers, no bodies, no query strings.
 * Also serves as Nest's LoggerService so framework messages come out in the same format.
 */
const RANK: Record<LogLevel, number> = { debug: 10, info: 20, warn: 30, error: 40, silent: 100 };

export type LogFields = Record<string, unknown>;

export class JsonLogger implements LoggerService {
  constructor(
    private readonly level: LogLevel = 'info',
    private readonly write: (line: string) => void = (line) => process.stdout.write(line),
  ) {}

  enabled(level: Exclude<LogLevel, 'silent'>): boolean {
    return RANK[level] >= RANK[this.level];
  }

  event(level: Exclude<LogLevel, 'silent'>, fields: LogFields): void {
    if (!this.enabled(level)) return;
    let line: string;
    try {
      line = JSON.stringify({ time: new Date().toISOString(), level, ...fields });
    } catch {
      line = JSON.stringify({ time: new Date().toISOString(), level, msg: String(fields['msg'] ?? 'unserializable log entry') });
    }
    this.write(line + '\n');
  }

  // --- Nest LoggerService ---------------------------------------------------------------------
  log(message: unknown, ...rest: unknown[]): void {
    this.event('info', nestFields(message, rest));
  }
  error(message: unknown, ...rest: unknown[]): void {
    const fields = nestFields(message, rest.length > 1 ? rest.slice(1) : rest);
    if (rest.length > 1 && typeof rest[0] === 'string') fields['stack'] = rest[0];
    this.event('error', fields);
  }
  warn(message: unknown, ...rest: unknown[]): void {
    this.event('warn', nestFields(message, rest));
  }
  debug(message: unknown, ...rest: unknown[]): void {
    this.event('debug', nestFields(message, rest));
  }
  verbose(message: unknown, ...rest: unknown[]): void {
    this.event('debug', nestFields(message, rest));
  }
  fatal(message: unknown, ...rest: unknown[]): void {
    this.event('error', nestFields(message, rest));
  }
}

function nestFields(message: unknown, rest: unknown[]): LogFields {
  const context = rest.length > 0 && typeof rest[rest.length - 1] === 'string' ? (rest[rest.length - 1] as string) : undefined;
  const fields: LogFields = { msg: message instanceof Error ? message.message : typeof message === 'string' ? message : JSON.stringify(message) };
  if (context) fields['context'] = context;
  return fields;
}
