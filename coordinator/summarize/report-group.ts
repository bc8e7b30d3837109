import type { GroupSummary } from './group-summary.js';
import type { TableCell } from './tables.js';

/**
 * The one unit the report is built from: the trials of a parameter point
 * (grid sweeps) or of a bin (sampled sweeps), where it sits on the diagrams,
 * and how many trials the sweep plans for it. Tables show one row per group,
 * diagrams pool the groups that share a cell.
 */
export interface ReportGroup {
  /** Values of the layout's leading columns (`ReportLayout.dims`): parameter values or bin edges. */
  readonly dims: readonly TableCell[];
  /** Cell indices on the x, y and facet axes (0 on an axis that is not shown). */
  readonly x: number;
  readonly y: number;
  readonly facet: number;
  /** Trials the sweep plans for this group. */
  readonly planned: number;
  readonly summary: GroupSummary;
}
