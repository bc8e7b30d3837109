import type { Point } from '../../shared/schemas/records.js';
import type { GroupSummary } from './group-summary.js';

/**
 * The one unit the report is built from: every trial of one parameter point,
 * summarised in constant memory, with how many trials the sweep plans there.
 * Tables show one row per group; diagrams place groups by their values
 * (pooling those that share a cell, or one marker each).
 */
export interface ReportGroup {
  /** Value of every parameter column (`CollectedReport.columns`): the varied ones, then any computed ones. */
  readonly values: Readonly<Point>;
  /** Trials the sweep plans for this point (0 for records of points it does not plan). */
  readonly planned: number;
  readonly summary: GroupSummary;
}

/** A leading column of the tables: a parameter, and how people read its name. */
export interface ParamColumn {
  readonly name: string;
  /** `name (unit)`. */
  readonly label: string;
}
