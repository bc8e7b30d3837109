import { tidy } from '../sweep/ranges.js';

/** How values along a refined axis are split. */
export interface AxisKind {
  /** Only whole numbers are valid values. */
  readonly whole: boolean;
  /** Split at the geometric mean (log-scaled ranges). */
  readonly log: boolean;
}

/**
 * The value halfway between a and b along an axis, or undefined when none
 * lies strictly between: whole-number axes take the whole number at or below
 * the middle (none between 3 and 4), others the middle at 12 significant
 * digits (none when that rounds onto an end).
 */
export function midpoint(kind: AxisKind, a: number, b: number): number | undefined {
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  const middle = kind.log && lo > 0 ? Math.sqrt(lo * hi) : (lo + hi) / 2;
  const m = kind.whole ? Math.floor(middle) : tidy(middle);
  return m > lo && m < hi ? m : undefined;
}
