import { type FieldIssue, SHOWN_ISSUES } from '../errors.js';
import { SWEEP_LIMITS } from './limits.js';

interface Visit {
  readonly value: unknown;
  /** Dotted path of the container holding the value ('' at the top). */
  readonly parent: string;
  readonly key: string;
  readonly depth: number;
}

/** Reverse the entries pushed since `mark`, so the first child is popped first (problems come in file order). */
function reverseFrom(stack: Visit[], mark: number): void {
  for (let i = mark, j = stack.length - 1; i < j; i++, j--) {
    const t = stack[i]!;
    stack[i] = stack[j]!;
    stack[j] = t;
  }
}

const join = (parent: string, key: string): string => (parent === '' ? key : `${parent}.${key}`);

/**
 * Problems a parsed sweep file has before its fields are even looked at:
 * nesting, sizes and values that no sweep needs and that would make later
 * steps slow, deep or big. The walk uses its own stack (no recursion), stops
 * at the first levels too deep, and visits at most SWEEP_LIMITS.values
 * values, so it is cheap and safe whatever the file holds. Also refused here:
 * numbers that are not finite (NaN, Infinity, a literal too large for a
 * double) and values that are not plain data (a parser's dates, sets or
 * big integers). A key such as `__proto__` passes here and is refused where
 * it stands (an unknown field or parameter), by the raw keys.
 * What passes is plain JSON data, so later steps need not walk it again.
 */
export function documentIssues(root: unknown): FieldIssue[] {
  const issues: FieldIssue[] = [];
  const stack: Visit[] = [];
  let values = 0;
  /** A number or string is checked where it stands; only lists and maps go on the stack. */
  const visit = (value: unknown, parent: string, key: string, depth: number): void => {
    values++;
    if (typeof value === 'number') {
      if (!Number.isFinite(value))
        issues.push({ path: join(parent, key), message: `must be a finite number, got ${value}` });
    } else if (typeof value === 'string') {
      // Texts are bounded by the file's size; each field says how long its own may be.
    } else if (value !== null && typeof value === 'object') {
      const prototype = Object.getPrototypeOf(value) as unknown;
      if (Array.isArray(value) || prototype === Object.prototype || prototype === null) {
        stack.push({ value, parent, key, depth });
      } else {
        issues.push({
          path: join(parent, key) || '(root)',
          message: 'must be a number, text, true/false, a list or a map',
        });
      }
    } else if (value !== null && typeof value !== 'boolean') {
      issues.push({
        path: join(parent, key) || '(root)',
        message: 'must be a number, text, true/false, a list or a map',
      });
    }
  };
  visit(root, '', '', 0);
  while (stack.length > 0 && issues.length < SHOWN_ISSUES) {
    if (values > SWEEP_LIMITS.values) {
      issues.push({
        path: '(file)',
        message: `the file holds more than ${SWEEP_LIMITS.values} values (numbers, strings, lists, maps); a sweep file needs far fewer`,
      });
      break;
    }
    const { value, parent, key, depth } = stack.pop()!;
    const here = join(parent, key);
    const path = here || '(root)';
    if (depth >= SWEEP_LIMITS.depth) {
      issues.push({
        path,
        message: `nested more than ${SWEEP_LIMITS.depth} levels deep (lists or maps inside each other); a sweep file needs far fewer`,
      });
      continue;
    }
    if (Array.isArray(value)) {
      if (value.length > SWEEP_LIMITS.listLength) {
        issues.push({
          path,
          message: `a list of ${value.length} values; at most ${SWEEP_LIMITS.listLength} are allowed`,
        });
        continue;
      }
      const mark = stack.length;
      for (let i = 0; i < value.length; i++) visit(value[i], here, String(i), depth + 1);
      reverseFrom(stack, mark);
      continue;
    }
    const keys = Object.keys(value as object);
    if (keys.length > SWEEP_LIMITS.mapKeys) {
      issues.push({ path, message: `a map of ${keys.length} keys; at most ${SWEEP_LIMITS.mapKeys} are allowed` });
      continue;
    }
    const mark = stack.length;
    for (const name of keys) {
      if (name.length > SWEEP_LIMITS.keyLength) {
        issues.push({
          path: join(here, `${name.slice(0, 40)}...`),
          message: `a key of ${name.length} characters; at most ${SWEEP_LIMITS.keyLength} are allowed`,
        });
      } else {
        visit((value as Record<string, unknown>)[name], here, name, depth + 1);
      }
    }
    reverseFrom(stack, mark);
  }
  return issues;
}

/** Values (numbers, strings, booleans, lists, maps) inside a value, counted without recursion. */
export function countValues(root: unknown): number {
  const stack: unknown[] = [root];
  let count = 0;
  while (stack.length > 0) {
    const value = stack.pop();
    count++;
    if (value === null || typeof value !== 'object') continue;
    for (const child of Array.isArray(value) ? value : Object.values(value)) stack.push(child);
  }
  return count;
}
