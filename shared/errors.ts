/**
 * The errors recallscape raises on purpose: exported classes, each with a
 * stable `name`. Code matches them by class with `isErrorOf(error, Class)`.
 * An error that crossed a thread or a JSON round trip has lost its prototype
 * but kept its name, and `isErrorOf` recognises it by that name.
 */

import { unknownNameHint } from './closest-names.js';

/** One validation problem, kept as data: which field, and what is wrong. */
export interface FieldIssue {
  /** Dotted path of the offending field, e.g. `vary.tauZPre.between`. */
  readonly path: string;
  readonly message: string;
}

/** Bad input from a user: exit code 2, a message that names the field. */
export class InputError extends Error {
  static readonly errorName = 'InputError';
  override readonly name: string = InputError.errorName;
  readonly issues: readonly FieldIssue[];
  /**
   * Set when the message is this headline followed by one line per issue
   * (see invalidInput): a printer then shows each issue as `headline: path: message`.
   */
  readonly headline: string | undefined;
  constructor(message: string, issues: readonly FieldIssue[] = [], headline?: string) {
    super(message);
    this.issues = issues;
    this.headline = headline;
  }
}

/** Results folder belongs to a different sweep (hash mismatch). Exit code 2. */
export class SweepMismatchError extends Error {
  static readonly errorName = 'SweepMismatchError';
  override readonly name: string = SweepMismatchError.errorName;
}

/** An external service (Redis) cannot be reached or refuses us. Exit code 1. */
export class ServiceError extends Error {
  static readonly errorName = 'ServiceError';
  override readonly name: string = ServiceError.errorName;
}

/**
 * One job of an external model failed in a known way (timeout, crash, a
 * reply outside the protocol, metrics of the wrong type). Carries the failure
 * kind and whether another attempt could help, so job runners record it as is.
 */
export class ModelFailure extends Error {
  static readonly errorName = 'ModelFailure';
  override readonly name: string = ModelFailure.errorName;
  readonly kind: 'exception' | 'timeout' | 'crashed';
  readonly retryable: boolean;
  constructor(kind: 'exception' | 'timeout' | 'crashed', message: string, retryable: boolean) {
    super(message);
    this.kind = kind;
    this.retryable = retryable;
  }
}

/** A class of this file: constructible, with its stable name. */
export type ErrorClass = (abstract new (...args: never[]) => Error) & { readonly errorName: string };

/** True when `error` is an instance of `cls`, or a copy of one that kept only its name. */
export function isErrorOf<C extends ErrorClass>(error: unknown, cls: C): error is InstanceType<C> {
  if (error instanceof cls) return true;
  return typeof error === 'object' && error !== null && (error as { name?: unknown }).name === cls.errorName;
}

/** Errors that are the user's fault (exit code 2). */
export const INPUT_ERRORS: readonly ErrorClass[] = [InputError, SweepMismatchError];

export function isInputError(error: unknown): boolean {
  return INPUT_ERRORS.some((cls) => isErrorOf(error, cls));
}

/** The parts of a zod issue this file reads (zod 4's issue type is wider). */
export interface ZodIssueLike {
  readonly code?: string;
  readonly path: ReadonlyArray<PropertyKey>;
  readonly message: string;
  /** Present on `unrecognized_keys` issues. */
  readonly keys?: readonly string[];
}

export interface IssueOptions {
  /** Dotted path put in front of every issue path, e.g. `vary.tauZPre`. */
  readonly prefix?: string;
  /** Keys allowed at a (prefixed) path, listed when an unknown key is found there. */
  readonly allowedAt?: (path: string) => readonly string[] | undefined;
}

/**
 * The one translation of zod issues into field issues: dotted paths, an
 * unknown key reported at its own path with the keys allowed there, and no
 * issue twice (zod reports each failed check, and several checks of one
 * field often share one message).
 */
export function issuesFromZod(issues: readonly ZodIssueLike[], options: IssueOptions | string = {}): FieldIssue[] {
  const { prefix = '', allowedAt } = typeof options === 'string' ? { prefix: options } : options;
  const out: FieldIssue[] = [];
  for (const issue of issues) {
    const base = [prefix, ...issue.path.map(String)].filter((p) => p !== '').join('.');
    if (issue.code === 'unrecognized_keys' && issue.keys !== undefined) {
      const allowed = allowedAt?.(base);
      for (const key of issue.keys) {
        out.push({
          path: base === '' ? key : `${base}.${key}`,
          message: `unknown field "${shorten(key)}"${allowed !== undefined ? `; ${unknownNameHint(key, allowed, 'allowed here:', allowed.length)}` : ''}`,
        });
      }
      continue;
    }
    out.push({ path: base === '' ? '(root)' : base, message: issue.message });
  }
  return distinctIssues(out);
}

/** Issues without repeats (same path and message), in first-seen order. */
export function distinctIssues(issues: readonly FieldIssue[]): FieldIssue[] {
  const seen = new Set<string>();
  return issues.filter((issue) => {
    const id = `${issue.path}\u0000${issue.message}`;
    if (seen.has(id)) return false;
    seen.add(id);
    return true;
  });
}

/** Issues printed in full; the rest are counted. */
export const SHOWN_ISSUES = 20;

/** One line per issue, `  field: message`, for terminal output; past SHOWN_ISSUES only a count. */
export function formatIssues(issues: readonly FieldIssue[]): string {
  const shown = issues.slice(0, SHOWN_ISSUES);
  const lines = shown.map((i) => `  ${i.path}: ${i.message}`);
  if (issues.length > shown.length) lines.push(`  ... and ${issues.length - shown.length} more`);
  return lines.join('\n');
}

/** An InputError whose message is a headline followed by one line per distinct issue. */
export function invalidInput(headline: string, issues: readonly FieldIssue[]): InputError {
  const distinct = distinctIssues(issues);
  return new InputError(`${headline}:\n${formatIssues(distinct)}`, distinct, headline);
}

/**
 * A user-supplied name or value inside a message: quoted, and cut short when
 * long, so a hostile file cannot make an error message megabytes long.
 */
export function shorten(text: string, max = 60): string {
  return text.length <= max ? text : `${text.slice(0, max)}... (${text.length} characters)`;
}
