import { type FieldIssue, formatIssues, InputError, isInputError } from '../shared/errors.js';

/** Exit codes shared by every command. */
export const EXIT_OK = 0;
/** Runtime trouble: a service is unreachable, a job failed, corrupt results. */
export const EXIT_FAILURE = 1;
/** The user's input is wrong; nothing was done. */
export const EXIT_INPUT = 2;

/**
 * Parse a whole-number option (`--threads`, `--max-jobs`, `--lock-ms`, `--bins`...)
 * in [min, max]; the InputError names the option and the allowed range.
 */
export function parseWholeNumber(option: string, raw: string, min: number, max = Number.MAX_SAFE_INTEGER): number {
  const value = Number(raw);
  if (!/^\s*\d+\s*$/.test(raw) || !Number.isSafeInteger(value) || value < min || value > max) {
    const message = `${option} must be a whole number from ${min} to ${max}, got "${raw}"`;
    throw new InputError(message, [{ path: option, message }]);
  }
  return value;
}

/**
 * Wrap a command action: known errors become one clear message on stderr and
 * an exit code, never a stack trace (set RECALLSCAPE_DEBUG=1 to see one).
 */
export function action<Args extends unknown[]>(
  fn: (...args: Args) => Promise<void> | void,
): (...args: Args) => Promise<void> {
  return async (...args: Args) => {
    try {
      await fn(...args);
    } catch (error) {
      process.exitCode = reportError(error);
    }
  };
}

/** Print an error for a person and return the exit code it deserves. */
export function reportError(error: unknown): number {
  const message = error instanceof Error ? error.message : String(error);
  const issues = (error as { issues?: FieldIssue[] } | null)?.issues;
  let text = `recallscape: ${message}`;
  if (Array.isArray(issues) && issues.length > 0 && !message.includes(issues[0]?.path ?? '\u0000')) {
    text += `\n${formatIssues(issues)}`;
  }
  process.stderr.write(`${text}\n`);
  if (process.env['RECALLSCAPE_DEBUG'] === '1' && error instanceof Error && error.stack !== undefined) {
    process.stderr.write(`${error.stack}\n`);
  }
  return isInputError(error) ? EXIT_INPUT : EXIT_FAILURE;
}
