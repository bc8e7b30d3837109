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
  /** Write here instead of stderr (tests); lines are JSON. */
  readonly destination?: NodeJS.WritableStream;
  /**
   * `command` (the default): a command a person runs; its warnings and errors
   * are plain lines in the program's voice (`recallscape: warning: ...`) and
   * routine information is left out, on a terminal or not.
   * `service`: a long-running process (the worker) whose log is collected by
   * a service manager: JSON lines, readable ones on a terminal.
   * RECALLSCAPE_LOG_FORMAT=json gives JSON lines in either case.
   */
  readonly style?: 'command' | 'service';
}

/** pino's numeric levels. */
const WARN = 40;
const ERROR = 50;

/** Fields of a log line that say why, shown after its message in the command style. */
function reasonOf(line: Record<string, unknown>): string | undefined {
  const reason = line['reason'];
  if (typeof reason === 'string') return reason;
  const err = line['err'];
  if (typeof err === 'object' && err !== null && typeof (err as { message?: unknown }).message === 'string') {
    return (err as { message: string }).message;
  }
  return undefined;
}

/** A log line (pino's JSON) as a person reads it, or undefined for routine lines. */
export function commandLine(json: string, verbose: boolean): string | undefined {
  let line: Record<string, unknown>;
  try {
    line = JSON.parse(json) as Record<string, unknown>;
  } catch {
    return undefined;
  }
  const level = typeof line['level'] === 'number' ? line['level'] : 0;
  if (level < WARN && !verbose) return undefined;
  const msg = typeof line['msg'] === 'string' ? line['msg'] : '';
  const reason = reasonOf(line);
  const text = reason === undefined || msg.includes(reason) ? msg : `${msg}: ${reason}`;
  const kind = level >= ERROR ? '' : level >= WARN ? 'warning: ' : 'note: ';
  return `recallscape: ${kind}${text.replace(/\s*\n\s*/g, ' ')}\n`;
}

/**
 * Logs go to stderr so stdout stays for command output (JSON metrics, tables).
 * See LoggerOptions.style for their form.
 */
export function createLogger(options: LoggerOptions): Logger {
  const level = options.level ?? process.env['RECALLSCAPE_LOG_LEVEL'] ?? 'info';
  const base = { name: options.name, level, redact: { paths: [...REDACTED_PATHS], censor: '***' } };
  if (options.destination !== undefined) return pino(base, options.destination);
  const json = process.env['RECALLSCAPE_LOG_FORMAT'] === 'json';
  if ((options.style ?? 'command') === 'command' && !json) {
    // Routine lines only when asked for by a debug level.
    const verbose = level === 'debug' || level === 'trace';
    return pino(base, {
      write(chunk: string) {
        const text = commandLine(chunk, verbose);
        if (text !== undefined) process.stderr.write(text);
      },
    });
  }
  if (process.stderr.isTTY === true && !json) {
    const pretty = requireCjs('pino-pretty') as typeof PinoPretty;
    return pino(base, pretty({ destination: 2, colorize: true, sync: true }));
  }
  return pino(base, pino.destination({ dest: 2, sync: true }));
}
