import { distinctIssues, type FieldIssue, InputError, isInputError, SHOWN_ISSUES } from '../shared/errors.js';

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
    const message = `${option}: must be a whole number from ${min} to ${max}, got "${raw}"`;
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

/**
 * Option parser of a repeatable option (`--set a=1 --set b=2`): collects the
 * values. Give it no default: the option is then undefined when absent, and
 * help shows no "(default: [])".
 */
export function repeatable(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

/** What starts every line recallscape writes to stderr for a person. */
export const PREFIX = 'recallscape: ';

/**
 * The lines of an error for a person: one line per problem, each complete on
 * its own (`headline: field: message` for an error listing field issues), so
 * every error reads the same whichever part of the program found it.
 */
export function errorLines(error: unknown): string[] {
  const headline = (error as { headline?: unknown } | null)?.headline;
  const issues = (error as { issues?: unknown } | null)?.issues;
  if (typeof headline === 'string' && Array.isArray(issues) && issues.length > 0) {
    const distinct = distinctIssues(issues as FieldIssue[]);
    const lines = distinct.slice(0, SHOWN_ISSUES).map((i) => `${headline}: ${i.path}: ${i.message}`);
    if (distinct.length > SHOWN_ISSUES)
      lines.push(`${headline}: ... and ${distinct.length - SHOWN_ISSUES} more problems`);
    return lines;
  }
  const message = error instanceof Error ? error.message : String(error);
  // A message someone wrote over several lines still makes one line.
  const parts = message
    .split('\n')
    .map((line) => line.trim())
    .filter((line) => line !== '');
  return [parts.join(' ').replace(/: ?$/, '') || 'unknown error'];
}

/** Write one error line (the text without prefix) to stderr. */
export function printError(text: string): void {
  process.stderr.write(`${PREFIX}${text}\n`);
}

/** Write one warning line to stderr: something the user should know, not an error. */
export function printWarning(text: string): void {
  process.stderr.write(`${PREFIX}warning: ${text}\n`);
}

/**
 * The argument parser's message in the program's words: "error: unknown
 * option '--outt'\n(Did you mean --out?)" becomes "unknown option '--outt';
 * did you mean --out?", and a message without a suggestion points to the help.
 */
export function usageErrorText(message: string, command: string | undefined): string {
  const [first = '', ...rest] = message.split('\n');
  const text = first.replace(/^error: /, '').replace(/\.$/, '');
  const suggestion = /\(Did you mean (.+)\?\)/.exec(rest.join(' '))?.[1];
  if (suggestion !== undefined) return `${text}; did you mean ${suggestion}?`;
  return `${text}; see \`recallscape${command === undefined ? '' : ` ${command}`} --help\``;
}

/** Print an error for a person and return the exit code it deserves. */
export function reportError(error: unknown): number {
  for (const line of errorLines(error)) printError(line);
  if (process.env['RECALLSCAPE_DEBUG'] === '1' && error instanceof Error && error.stack !== undefined) {
    process.stderr.write(`${error.stack}\n`);
  }
  return isInputError(error) ? EXIT_INPUT : EXIT_FAILURE;
}
