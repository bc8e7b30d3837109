/**
 * Errors that cross process boundaries (thread pool, BullMQ, CLI exit codes)
 * are identified by their stable `name`, never by `instanceof`, because a
 * structured clone or a JSON round trip drops the prototype.
 */

/** One validation problem, kept as data: which field, and what is wrong. */
export interface FieldIssue {
  /** Dotted path of the offending field, e.g. `vary.tauZPre.between`. */
  readonly path: string;
  readonly message: string;
}

/** Bad input from a user: exit code 2, a message that names the field. */
export class InputError extends Error {
  override readonly name = 'InputError';
  readonly issues: readonly FieldIssue[];
  constructor(message: string, issues: readonly FieldIssue[] = []) {
    super(message);
    this.issues = issues;
  }
}

/** Results folder belongs to a different sweep (hash mismatch). Exit code 2. */
export class SweepMismatchError extends Error {
  override readonly name = 'SweepMismatchError';
}

/** Result shards disagree with each other (two different records for one key). */
export class CorruptResultsError extends Error {
  override readonly name = 'CorruptResultsError';
}

/** An external service (Redis) cannot be reached or refuses us. Exit code 1. */
export class ServiceError extends Error {
  override readonly name = 'ServiceError';
}

/** A job payload that can never succeed: fail it without retries. */
export class InvalidJobError extends Error {
  override readonly name = 'InvalidJobError';
}

/** Names of errors that are the user's fault (exit code 2). */
export const INPUT_ERROR_NAMES: ReadonlySet<string> = new Set(['InputError', 'SweepMismatchError']);

/** Turn zod issues into field issues with dotted paths. */
export function issuesFromZod(
  issues: ReadonlyArray<{ path: ReadonlyArray<PropertyKey>; message: string }>,
  prefix = '',
): FieldIssue[] {
  return issues.map((issue) => {
    const path = [prefix, ...issue.path.map((p) => String(p))].filter((p) => p !== '').join('.');
    return { path: path === '' ? '(root)' : path, message: issue.message };
  });
}

/** One line per issue, `field: message`, for terminal output. */
export function formatIssues(issues: readonly FieldIssue[]): string {
  return issues.map((i) => `  ${i.path}: ${i.message}`).join('\n');
}

/**
 * One job of an external model failed in a known way (timeout, crash, a
 * reply outside the protocol, metrics of the wrong type). Carries the failure
 * kind and whether another attempt could help, so job runners record it as is.
 */
export class ModelFailure extends Error {
  override readonly name = 'ModelFailure';
  readonly kind: 'exception' | 'timeout' | 'crashed';
  readonly retryable: boolean;
  constructor(kind: 'exception' | 'timeout' | 'crashed', message: string, retryable: boolean) {
    super(message);
    this.kind = kind;
    this.retryable = retryable;
  }
}
