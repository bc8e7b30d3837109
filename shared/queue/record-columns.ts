/**
 * A list of JSON records as columns, so that what every record repeats is
 * stored once and what varies sits next to its like (which compresses far
 * better than the same values spread over rows).
 *
 * A column describes one value per record:
 * - `{ c: value }`: the same JSON value in every record, stored once;
 * - `{ k: keys, o: columns }`: plain objects with the same key sequence in
 *   every record, one column per key (in that order);
 * - `{ a: values }`: anything else, one value per record as is.
 * The list itself is one column: records of different key sets become one
 * `a` column, i.e. rows. Nothing here knows a record's schema.
 */
export type Column = { readonly c: unknown } | { readonly a: readonly unknown[] } | ObjectColumn;
type ObjectColumn = { readonly k: readonly string[]; readonly o: readonly Column[] };

/** Deepest nesting of object columns (records are a few levels deep; a hostile table could be a million). */
export const MAX_COLUMN_DEPTH = 32;

/** The records as one column. They must be JSON values, as for `JSON.stringify`. */
export function toColumns(records: readonly unknown[]): Column {
  return columnOf(records, 0);
}

/**
 * The records a column describes, `count` of them, each a fresh value whose
 * `JSON.stringify` equals that of the record that went in. Undefined when
 * the column is malformed, or when the records would exceed about `maxChars`
 * characters of JSON (a value stored once stands for `count` copies, so a
 * small table could otherwise unfold into gigabytes).
 */
export function fromColumns(column: unknown, count: number, maxChars: number): unknown[] | undefined {
  try {
    return valuesOf(column, count, { left: maxChars }, 0);
  } catch {
    // Only a table deeper than the stack (prevented by MAX_COLUMN_DEPTH) or a value JSON cannot copy lands here.
    return undefined;
  }
}

function isPrimitive(value: unknown): value is string | number | boolean | null {
  return value === null || typeof value === 'string' || typeof value === 'number' || typeof value === 'boolean';
}

function isPlainObject(value: unknown): value is Record<string, unknown> {
  if (typeof value !== 'object' || value === null || Array.isArray(value)) return false;
  const proto = Object.getPrototypeOf(value);
  return proto === Object.prototype || proto === null;
}

/** A value JSON leaves out of an object (and would turn into null in an array). */
function isOmitted(value: unknown): boolean {
  return value === undefined || typeof value === 'function' || typeof value === 'symbol';
}

/** The shared key sequence of these values when all are plain objects with JSON-visible values only. */
function sharedKeys(values: readonly unknown[]): string[] | undefined {
  const first = values[0];
  if (!isPlainObject(first)) return undefined;
  const keys = Object.keys(first);
  for (const value of values) {
    if (!isPlainObject(value)) return undefined;
    const own = Object.keys(value);
    if (own.length !== keys.length) return undefined;
    for (let j = 0; j < keys.length; j++) {
      if (own[j] !== keys[j] || isOmitted(value[keys[j]!])) return undefined;
    }
  }
  return keys;
}

function columnOf(values: readonly unknown[], depth: number): Column {
  if (values.length === 0) return { a: [] };
  const first = values[0];
  // Equal primitives have equal JSON (0 and -0 both print 0; NaN !== NaN, so it stays a plain column).
  if (isPrimitive(first) && values.every((v) => v === first)) return { c: first };
  const keys = depth < MAX_COLUMN_DEPTH ? sharedKeys(values) : undefined;
  if (keys !== undefined) {
    return {
      k: keys,
      o: keys.map((key) =>
        columnOf(
          values.map((v) => (v as Record<string, unknown>)[key]),
          depth + 1,
        ),
      ),
    };
  }
  if (!isPrimitive(first)) {
    const json = JSON.stringify(first);
    if (json !== undefined && values.every((v) => JSON.stringify(v) === json)) return { c: first };
  }
  return { a: values };
}

interface Budget {
  left: number;
}

function spend(budget: Budget, chars: number): boolean {
  budget.left -= chars;
  return budget.left >= 0;
}

function valuesOf(column: unknown, count: number, budget: Budget, depth: number): unknown[] | undefined {
  if (!isPlainObject(column)) return undefined;
  const fields = Object.keys(column);
  if (fields.length === 1 && fields[0] === 'c') {
    const value = column.c;
    if (isPrimitive(value)) {
      if (!spend(budget, JSON.stringify(value).length * count)) return undefined;
      return new Array<unknown>(count).fill(value);
    }
    // One copy each, so that no two records share an object.
    const json = JSON.stringify(value);
    if (!spend(budget, json.length * count)) return undefined;
    return Array.from({ length: count }, () => JSON.parse(json) as unknown);
  }
  if (fields.length === 1 && fields[0] === 'a') {
    const values = column.a;
    return Array.isArray(values) && values.length === count ? values : undefined;
  }
  if (fields.length === 2 && fields[0] === 'k' && fields[1] === 'o') return objectsOf(column, count, budget, depth);
  return undefined;
}

function objectsOf(
  column: Record<string, unknown>,
  count: number,
  budget: Budget,
  depth: number,
): unknown[] | undefined {
  const { k: keys, o: columns } = column;
  if (depth >= MAX_COLUMN_DEPTH || !Array.isArray(keys) || !Array.isArray(columns)) return undefined;
  if (keys.length !== columns.length || !keys.every((key) => typeof key === 'string')) return undefined;
  if (new Set(keys).size !== keys.length) return undefined;
  // Braces, quotes, colon and comma around each key, in every record.
  if (!spend(budget, (2 + keys.reduce((sum: number, key: string) => sum + key.length + 4, 0)) * count)) {
    return undefined;
  }
  const fieldValues: unknown[][] = [];
  for (const child of columns) {
    const values = valuesOf(child, count, budget, depth + 1);
    if (values === undefined) return undefined;
    fieldValues.push(values);
  }
  const objects: Record<string, unknown>[] = [];
  for (let i = 0; i < count; i++) {
    const object: Record<string, unknown> = {};
    for (let j = 0; j < keys.length; j++) {
      const key = keys[j] as string;
      // Assigning `__proto__` would set the prototype; JSON.parse makes it an own key, and so must we.
      if (key === '__proto__') {
        Object.defineProperty(object, key, {
          value: fieldValues[j]![i],
          enumerable: true,
          writable: true,
          configurable: true,
        });
      } else object[key] = fieldValues[j]![i];
    }
    objects.push(object);
  }
  return objects;
}
