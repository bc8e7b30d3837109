import { INPUT_ERROR_NAMES, formatIssues, type FieldIssue } from '../shared/errors.js';

/** Exit codes shared by every command. */
export const EXIT_OK = 0;
/** Runtime trouble: a service is unreachable, a job failed, corrupt results. */
export const EXIT_FAILURE = 1;
/** The user's input is wrong; nothing was done. */
export const EXIT_INPUT = 2;

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
  const name = error instanceof Error ? error.name : 'Error';
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
  return INPUT_ERROR_NAMES.has(name) ? EXIT_INPUT : EXIT_FAILURE;
}
