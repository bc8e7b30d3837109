import { RunningStats } from './running-stats.js';

/** How a metric is summarised: booleans as rates, numbers as mean and sd. */
export type MetricKind = 'boolean' | 'number';

/**
 * Everything the reports need about the trials of one group (a parameter
 * point, a bin or a diagram cell): trial count, successes, and a running
 * summary of every other scalar metric. Constant memory per group.
 */
export class GroupSummary {
  n = 0;
  successes = 0;
  /** Per metric name; `count` may be below `n` when a metric was null or absent. */
  readonly metrics = new Map<string, RunningStats>();
  /** A job key of one successful and one unsuccessful trial, for `inspect` (null until one is seen). */
  successKey: string | null = null;
  failureKey: string | null = null;

  /**
   * Add one trial. Arrays and nulls are skipped (arrays are per-sequence
   * detail, nulls mean "not applicable", e.g. no error position in a success).
   * `kinds` is the sweep-wide table of metric kinds, filled in as metrics
   * appear, so no second pass is needed.
   */
  add(metrics: Readonly<Record<string, unknown>>, kinds: Map<string, MetricKind>, key: string | null = null): void {
    this.n += 1;
    if (metrics['success'] === true) {
      this.successes += 1;
      this.successKey ??= key;
    } else this.failureKey ??= key;
    for (const name in metrics) {
      if (name === 'success') continue;
      const value = metrics[name];
      let x: number;
      if (typeof value === 'number') {
        if (!Number.isFinite(value)) continue;
        x = value;
        if (kinds.get(name) !== 'number') kinds.set(name, 'number');
      } else if (typeof value === 'boolean') {
        x = value ? 1 : 0;
        // A metric that is sometimes a number stays a number.
        if (!kinds.has(name)) kinds.set(name, 'boolean');
      } else {
        continue;
      }
      let stats = this.metrics.get(name);
      if (stats === undefined) {
        stats = new RunningStats();
        this.metrics.set(name, stats);
      }
      stats.add(x);
    }
  }

  merge(other: GroupSummary): void {
    this.n += other.n;
    this.successes += other.successes;
    this.successKey ??= other.successKey;
    this.failureKey ??= other.failureKey;
    for (const [name, stats] of other.metrics) {
      let mine = this.metrics.get(name);
      if (mine === undefined) {
        mine = new RunningStats();
        this.metrics.set(name, mine);
      }
      mine.merge(stats);
    }
  }
}
