import { createRequire } from 'node:module';
import { type Logger, pino } from 'pino';
import type PinoPretty from 'pino-pretty';

// pino-pretty is loaded only for a terminal: piped and service runs start without it.
const requireCjs = createRequire(import.meta.url);

export type { Logger };

/** Fields that may hold a secret; pino replaces them before anything is written. */
export const REDACTED_PATHS = [
  'password',
  '*.password',
  'redisUrl',
  '*.redisUrl',
  'redis.url',
  'redis.password',
  'connection.password',
] as const;

export interface LoggerOptions {
  readonly name: string;
  readonly level?: string;
  /** Write here instead of stderr (tests). */
  readonly destination?: NodeJS.WritableStream;
}

/**
 * Logs go to stderr so stdout stays for command output (JSON metrics, tables).
 * JSON lines everywhere, human-readable only when stderr is a terminal.
 */
export function createLogger(options: LoggerOptions): Logger {
  const level = options.level ?? process.env['RECALLSCAPE_LOG_LEVEL'] ?? 'info';
  const base = { name: options.name, level, redact: { paths: [...REDACTED_PATHS], censor: '***' } };
  if (options.destination !== undefined) return pino(base, options.destination);
  if (process.stderr.isTTY === true) {
    const pretty = requireCjs('pino-pretty') as typeof PinoPretty;
    return pino(base, pretty({ destination: 2, colorize: true, sync: true }));
  }
  return pino(base, pino.destination({ dest: 2, sync: true }));
}
