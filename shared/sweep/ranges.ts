import { z } from 'zod';
import { SWEEP_LIMITS } from './limits.js';

/**
 * Ranges of a varied parameter. Each kind is recognised by its leading key
 * (`list`, `from`, `between`, `among`), so an error can name the kind the
 * user meant instead of listing every alternative. The schemas hold only
 * checks that cost the same whatever the numbers; checks that walk a
 * range's values run after the size limits (see load.ts).
 */

export const RANGE_KINDS = ['list', 'steps', 'between', 'among'] as const;
export type RangeKind = (typeof RANGE_KINDS)[number];

/** How each kind is written (help texts) and the key that marks it (where its issues are reported). */
export const RANGE_FORMS: Readonly<Record<RangeKind, { readonly key: string; readonly syntax: string }>> = {
  list: { key: 'list', syntax: '{ list: [...] }' },
  steps: { key: 'from', syntax: '{ from, to, steps, scale? }' },
  between: { key: 'between', syntax: '{ between: [low, high], scale?, integer? }' },
  among: { key: 'among', syntax: '{ among: [...] }' },
};

const ScaleSchema = z
  .enum(['linear', 'log'])
  .default('linear')
  .describe('linear: even spacing; log: even spacing of the logarithm (needs values > 0)');

/** No value twice (0 and -0 count as one). One set per type, so no value is turned into text. */
function distinct(values: ReadonlyArray<string | number | boolean>): boolean {
  const numbers = new Set<number>();
  const texts = new Set<string>();
  const flags = new Set<boolean>();
  for (const v of values) {
    const set: Set<unknown> = typeof v === 'number' ? numbers : typeof v === 'string' ? texts : flags;
    if (set.has(v)) return false;
    set.add(v);
  }
  return true;
}

const LIST_RULE = `a list of 1 to ${SWEEP_LIMITS.listLength} distinct values`;

/** A value of `list` or `among`: what a point may hold, with texts kept short (they travel in every job). */
const RangeValueSchema = z.union([
  z.number(),
  z.string().max(SWEEP_LIMITS.rangeText, `a text value of a range has at most ${SWEEP_LIMITS.rangeText} characters`),
  z.boolean(),
]);

/** Explicit values; a discrete set for every sampler. */
export const ListRangeSchema = z
  .object({
    list: z
      .array(RangeValueSchema)
      .min(1, 'a list needs at least one value')
      .max(SWEEP_LIMITS.listLength, `${LIST_RULE}; got more`)
      .refine(distinct, 'the values of a list must be distinct')
      .describe('Explicit values: numbers, strings or booleans'),
  })
  .strict();

const STEPS_RULE = `steps must be a whole number from 1 to ${SWEEP_LIMITS.steps}`;

/** Evenly spaced grid values, ends included (grid sampler only). */
export const StepsRangeSchema = z
  .object({
    from: z.number(),
    to: z.number(),
    steps: z.number({ error: STEPS_RULE }).int(STEPS_RULE).min(1, STEPS_RULE).max(SWEEP_LIMITS.steps, STEPS_RULE),
    scale: ScaleSchema,
  })
  .strict()
  .superRefine(
    (r, ctx) => {
      const issue = (path: string, message: string): void => {
        ctx.addIssue({ code: 'custom', path: [path], message });
      };
      if (r.scale === 'log' && (r.from <= 0 || r.to <= 0)) {
        issue(
          'from',
          `a log scale needs from and to greater than 0 (got from ${r.from}, to ${r.to}); use scale: linear or positive ends`,
        );
      } else if (!Number.isFinite(r.to - r.from)) {
        issue('to', `from (${r.from}) and to (${r.to}) are too far apart to space values between them`);
      }
      if (r.steps > 1 && r.from === r.to) {
        issue('steps', `from equals to, so ${r.steps} steps would repeat one value; use steps: 1 or different ends`);
      }
      if (r.steps === 1 && r.from !== r.to) {
        issue(
          'steps',
          `steps: 1 gives one value but from (${r.from}) and to (${r.to}) differ; use steps >= 2, or from = to`,
        );
      }
    },
    // Only a range whose fields all passed is worth a cross-field look.
    { when: (payload) => payload.issues.length === 0 },
  );

/** A continuous interval for the drawing samplers. */
export const BetweenRangeSchema = z
  .object({
    between: z.tuple([z.number(), z.number()]).describe('[low, high], low < high'),
    scale: ScaleSchema,
    integer: z.boolean().default(false).describe('Draw whole numbers, uniformly over the integers of [low, high]'),
  })
  .strict()
  .superRefine(
    (r, ctx) => {
      const [a, b] = r.between;
      const issue = (message: string): void => {
        ctx.addIssue({ code: 'custom', path: ['between'], message });
      };
      if (!(a < b)) issue(`the low end must be below the high end, got [${a}, ${b}]`);
      else if (!Number.isFinite(b - a)) issue(`the ends [${a}, ${b}] are too far apart to draw between them`);
      if (r.scale === 'log' && a <= 0) {
        issue(`a log scale needs both ends greater than 0, got [${a}, ${b}]; use scale: linear or a positive low end`);
      }
      if (r.integer && !(Number.isSafeInteger(a) && Number.isSafeInteger(b))) {
        issue(`integer: true needs whole-number ends between -(2^53 - 1) and 2^53 - 1, got [${a}, ${b}]`);
      }
    },
    { when: (payload) => payload.issues.length === 0 },
  );

/** A discrete set for the drawing samplers (each value equally likely). */
export const AmongRangeSchema = z
  .object({
    among: z
      .array(RangeValueSchema)
      .min(1, 'among needs at least one value')
      .max(SWEEP_LIMITS.listLength, `among takes 1 to ${SWEEP_LIMITS.listLength} distinct values; got more`)
      .refine(distinct, 'the values of among must be distinct'),
  })
  .strict();

/** Any range (used for the JSON Schema and the inferred type). */
export const RangeSchema = z.union([ListRangeSchema, StepsRangeSchema, BetweenRangeSchema, AmongRangeSchema]);

export type ListRange = z.output<typeof ListRangeSchema>;
export type StepsRange = z.output<typeof StepsRangeSchema>;
export type BetweenRange = z.output<typeof BetweenRangeSchema>;
export type AmongRange = z.output<typeof AmongRangeSchema>;
export type Range = z.output<typeof RangeSchema>;

/** Which kind a raw range object is, by its leading key; undefined if none. */
export function rangeKindOf(raw: unknown): RangeKind | undefined {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) return undefined;
  if ('list' in raw) return 'list';
  if ('between' in raw) return 'between';
  if ('among' in raw) return 'among';
  if ('from' in raw || 'to' in raw || 'steps' in raw) return 'steps';
  return undefined;
}

export function rangeKind(range: Range): RangeKind {
  const kind = rangeKindOf(range);
  if (kind === undefined) throw new TypeError('not a range');
  return kind;
}

export const RANGE_SCHEMAS = {
  list: ListRangeSchema,
  steps: StepsRangeSchema,
  between: BetweenRangeSchema,
  among: AmongRangeSchema,
} as const;

/**
 * Distinct values a range can give: the list, the steps, the whole numbers
 * of an integer interval; Infinity for a continuous interval. Arithmetic
 * only, so limits can be checked before anything is expanded.
 */
export function rangeSize(range: Range): number {
  if ('list' in range) return range.list.length;
  if ('among' in range) return range.among.length;
  if ('steps' in range) return range.steps;
  return range.integer ? range.between[1] - range.between[0] + 1 : Number.POSITIVE_INFINITY;
}

/** True when every value a range gives is one of finitely many (a drawn point may then repeat). */
export function isDiscrete(range: Range): boolean {
  return !('between' in range) || range.integer;
}

/**
 * Twelve significant digits: grid and sampled values stay readable
 * (0.3, not 0.30000000000000004) and identical on every machine, because
 * toPrecision is exactly specified by ECMAScript.
 */
export function tidy(x: number): number {
  if (x === 0 || !Number.isFinite(x)) return x;
  return Number(x.toPrecision(12));
}

/** Value `i` (0-based) of a grid range: both ends exact, the values between them tidied. */
export function stepValueAt(range: StepsRange, i: number): number {
  const { from, to, steps, scale } = range;
  if (i === 0) return from;
  if (i === steps - 1) return to;
  const t = i / (steps - 1);
  if (scale === 'log') return tidy(Math.exp(Math.log(from) + t * (Math.log(to) - Math.log(from))));
  return tidy(from + t * (to - from));
}

/** The values of a grid range, in order. */
export function stepValues(range: StepsRange): number[] {
  return Array.from({ length: range.steps }, (_, i) => stepValueAt(range, i));
}

/**
 * The first value a grid range would give twice, or undefined. Values are
 * tidied to 12 significant digits, so steps closer than that repeat a value
 * (and a repeated value would be repeated jobs). When the spacing is clearly
 * wider than the rounding the answer needs no values at all; otherwise the
 * values are compared with their neighbours, which suffices because they
 * only ever grow (or only shrink) from one end to the other.
 */
export function repeatedStepValue(range: StepsRange): number | undefined {
  const { from, to, steps, scale } = range;
  if (steps <= 2 || from === to) return undefined;
  if (scale === 'linear') {
    const spacing = Math.abs(to - from) / (steps - 1);
    // One unit in the 12th significant digit of the largest value: tidy() moves a value by at most half of it.
    const unit = 10 ** (Math.floor(Math.log10(Math.max(Math.abs(from), Math.abs(to)))) - 11);
    if (spacing > 4 * unit) return undefined;
  } else {
    // Neighbours differ by the factor exp(spacing); tidy() moves a value by at most 5e-12 of itself.
    const spacing = Math.abs(Math.log(to) - Math.log(from)) / (steps - 1);
    if (spacing > 1e-9) return undefined;
  }
  let previous = stepValueAt(range, 0);
  for (let i = 1; i < steps; i++) {
    const value = stepValueAt(range, i);
    if (value === previous) return value;
    previous = value;
  }
  return undefined;
}

/** Values a grid range takes (list or steps). */
export function gridValues(range: ListRange | StepsRange): Array<string | number | boolean> {
  return 'list' in range ? [...range.list] : stepValues(range);
}

/** One parameter of a grid: its number of values and value `i`, computed when first asked for. */
export interface GridAxis {
  readonly size: number;
  at(i: number): string | number | boolean;
  /** Positions of the smallest and the largest number among the values (-1 when there is none). */
  readonly lowest: number;
  readonly highest: number;
}

/**
 * A grid range as an axis. Step values are computed on demand and kept, so
 * reaching a few points of a 100,000-step range costs a few values, not
 * 100,000 (and walking every point still computes each value once).
 */
export function gridAxis(range: ListRange | StepsRange): GridAxis {
  if ('list' in range) {
    const values = range.list;
    let lowest = -1;
    let highest = -1;
    values.forEach((v, i) => {
      if (typeof v !== 'number') return;
      if (lowest < 0 || v < (values[lowest] as number)) lowest = i;
      if (highest < 0 || v > (values[highest] as number)) highest = i;
    });
    return { size: values.length, at: (i) => values[i]!, lowest, highest };
  }
  const known: number[] = [];
  const ascending = range.to >= range.from;
  return {
    size: range.steps,
    at: (i) => {
      let v = known[i];
      if (v === undefined) {
        v = stepValueAt(range, i);
        known[i] = v;
      }
      return v;
    },
    // Step values only grow (or only shrink) from `from` to `to`.
    lowest: ascending ? 0 : range.steps - 1,
    highest: ascending ? range.steps - 1 : 0,
  };
}

/**
 * Map a unit value u in [0, 1) to a range value. Discrete sets take index
 * floor(u*n). `between` is uniform (or log-uniform) on [low, high); with
 * `integer: true` every whole number of [low, high] is equally likely on a
 * linear scale, and on a log scale floor() of a log-uniform draw on
 * [low, high + 1) is taken.
 */
export function valueAt(range: Range, u: number): string | number | boolean {
  if ('list' in range || 'among' in range) {
    const values = 'list' in range ? range.list : range.among;
    const i = Math.min(values.length - 1, Math.floor(u * values.length));
    return values[i]!;
  }
  if ('between' in range) {
    const [a, b] = range.between;
    if (range.integer) {
      if (range.scale === 'log') {
        const v = Math.floor(Math.exp(Math.log(a) + u * (Math.log(b + 1) - Math.log(a))));
        return Math.min(b, Math.max(a, v));
      }
      return Math.min(b, a + Math.floor(u * (b - a + 1)));
    }
    const v = range.scale === 'log' ? Math.exp(Math.log(a) + u * (Math.log(b) - Math.log(a))) : a + u * (b - a);
    return Math.min(b, Math.max(a, tidy(v)));
  }
  throw new TypeError('from/to/steps ranges belong to the grid sampler');
}
