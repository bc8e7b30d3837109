import type { ParamInfo } from '../../shared/model.js';
import { AdaptiveJobs } from '../../shared/refine/design-jobs.js';
import type { FailureKind, Point } from '../../shared/schemas/records.js';
import { computedParams, countJobs } from '../../shared/sweep/expand.js';
import type { LoadedSweep } from '../../shared/sweep/load.js';
import { iteratePoints } from '../../shared/sweep/points.js';
import { aggregateRecords } from './aggregate.js';
import type { ShownMetric } from './cell-grid.js';
import { type DiagramKind, diagramKindOf } from './diagram-kind.js';
import { GroupSummary, type MetricKind } from './group-summary.js';
import { paramLabel } from './param-label.js';
import type { ParamColumn, ReportGroup } from './report-group.js';
import {
  checkLogAxes,
  checkMetric,
  type ReportFormat,
  type ResolvedSettings,
  resolveSettings,
} from './report-settings.js';
import type { ReportSource, ScanWarning } from './report-source.js';
import { TrialRecorder } from './trial-recorder.js';

export interface ReportOptions {
  readonly dir: string;
  readonly x?: string;
  readonly y?: string;
  readonly facet?: string;
  readonly metric?: string;
  readonly formats?: readonly ReportFormat[];
  readonly bins?: number;
  readonly pngScale?: number;
  /** Parameters to draw on a log axis. */
  readonly log?: readonly string[];
}

export type ReportSweep = LoadedSweep & { readonly codeVersion: string; readonly createdAt: string };

/** Everything the charts and the page draw from: read once, rendered by many. */
export interface CollectedReport {
  readonly sweep: ReportSweep;
  /** Where the records came from; charts that list every trial read it again. */
  readonly source: ReportSource;
  /** The sweep folder as the user named it (for commands shown on the page). */
  readonly dir: string;
  readonly settings: ResolvedSettings;
  /** Leading table columns: the varied parameters in file order, then the computed ones (`derived`). */
  readonly columns: readonly ParamColumn[];
  /** Names of the computed parameters, in file order. */
  readonly computed: readonly string[];
  /** One per parameter point, in the sweep's order; points with records but no plan come last. */
  readonly groups: readonly ReportGroup[];
  /** Every scalar metric of the records except `success`, with how it is summarised. */
  readonly metricKinds: ReadonlyMap<string, MetricKind>;
  /** The metric the diagrams show. */
  readonly metric: ShownMetric;
  /** Varied parameters on no axis and no facet: the diagrams pool over them. */
  readonly pooled: readonly string[];
  /** Heat maps of cells, or markers over a smooth field (sampled sweeps). */
  readonly diagramKind: DiagramKind;
  readonly plannedJobs: number;
  readonly completedJobs: number;
  /** Jobs with an error and no result. */
  readonly failedJobs: number;
  /** Attempts that ended in an error, by kind, most frequent first. */
  readonly failuresByKind: readonly (readonly [FailureKind, number])[];
  /** The first MAX_WARNINGS_KEPT problems met while reading the shards. */
  readonly warnings: readonly ScanWarning[];
  /** How many there were in all; may exceed `warnings.length`. */
  readonly warningCount: number;
  /** A finished trials.csv written during the scan (a temporary file to move into place), or null. */
  readonly trialsFile: string | null;
  /** The metric columns of trials.csv: the model's declared scalar metrics and any others seen. */
  readonly trialMetrics: readonly string[];
  /** `name (unit)` of a parameter, for axis titles and table headers. */
  label(param: string): string;
  readonly paramInfo: Readonly<Record<string, ParamInfo>>;
}

/** Warnings kept in full; beyond this only counted. */
const MAX_WARNINGS_KEPT = 200;

interface OpenGroup {
  readonly values: Point;
  planned: number;
  summary: GroupSummary;
}

/**
 * Resolve the axes and stream the failures and the records once into one
 * summary per parameter point. Throws InputError for a bad option before
 * anything is written; `--metric` is checked after the scan, when the
 * metrics are known.
 */
export async function collectReport(source: ReportSource, options: ReportOptions): Promise<CollectedReport> {
  const sweep = await source.readSweep();
  const { spec, model } = sweep;
  const settings = resolveSettings(
    {
      x: options.x,
      y: options.y,
      facet: options.facet,
      metric: options.metric,
      bins: options.bins,
      formats: options.formats,
      pngScale: options.pngScale,
      log: options.log,
    },
    spec.report,
    sweep.variedNames,
  );
  checkLogAxes(settings.log, spec.vary, options.log !== undefined);
  const label = (p: string): string => paramLabel(p, model.paramInfo);
  const names = sweep.variedNames;
  const computed = sweep.derived === undefined ? [] : Object.keys(spec.derived ?? {});
  const keyOf = (point: Point): string => JSON.stringify(names.map((n) => point[n] ?? null));
  // The varied values, then the computed ones (a function of the point, so they never split a group).
  const valuesOf = (point: Point): Point => {
    const values: Point = {};
    for (const n of names) {
      const v = point[n];
      if (v !== undefined) values[n] = v;
    }
    if (computed.length > 0) {
      try {
        Object.assign(values, computedParams(sweep, values));
      } catch {
        // A recorded point the formulas reject (an edited sweep): its computed columns stay empty.
      }
    }
    return values;
  };

  // Planned trials per point, in the sweep's order.
  const groups = new Map<string, OpenGroup>();
  for (const point of iteratePoints(sweep)) {
    const key = keyOf(point);
    let group = groups.get(key);
    if (group === undefined) {
      group = { values: valuesOf(point), planned: 0, summary: new GroupSummary() };
      groups.set(key, group);
    }
    group.planned += spec.replicates;
  }

  const warnings: ScanWarning[] = [];
  let warningCount = 0;
  const onWarning = (w: ScanWarning): void => {
    warningCount += 1;
    if (warnings.length < MAX_WARNINGS_KEPT) warnings.push(w);
  };

  // Failures first (few), so the record scan can clear keys that later succeeded.
  const attemptsByKind = new Map<FailureKind, number>();
  const failedKeys = new Map<string, FailureKind>();
  for await (const failure of source.failures({ onWarning })) {
    attemptsByKind.set(failure.kind, (attemptsByKind.get(failure.kind) ?? 0) + 1);
    failedKeys.set(failure.key, failure.kind);
  }

  // trials.csv is written during this scan when the model declares its metrics (see TrialRecorder).
  const declared = Object.entries(model.metricInfo ?? {})
    .filter(([name, info]) => name !== 'success' && info.type !== 'numbers')
    .map(([name]) => name)
    .sort();
  const recorder =
    settings.formats.has('csv') && model.metricInfo !== undefined
      ? new TrialRecorder(source.dir, [...names, ...computed], declared)
      : null;
  try {
    // Point index of every planned point (table order); unplanned ones are numbered as they appear.
    const pointIndex = new Map<string, number>();
    for (const key of groups.keys()) pointIndex.set(key, pointIndex.size);
    // Records of points the sweep does not plan (an edited sweep) still count, with planned = 0.
    const unplanned = new Map<string, Point>();
    // An adaptive sweep plans what its design asks for given the results: keep each trial's border metric.
    const refineMetric = spec.refine?.metric;
    const refineOutcomes = new Map<string, Readonly<Record<string, unknown>>>();
    const aggregation = await aggregateRecords(source.records({ onWarning }), (record) => {
      if (failedKeys.size > 0) failedKeys.delete(record.key);
      if (refineMetric !== undefined) refineOutcomes.set(record.key, { [refineMetric]: record.metrics[refineMetric] });
      const key = keyOf(record.point);
      if (!groups.has(key) && !unplanned.has(key)) {
        unplanned.set(key, valuesOf(record.point));
        pointIndex.set(key, pointIndex.size);
      }
      recorder?.add(record, pointIndex.get(key) ?? null, groups.get(key)?.values ?? unplanned.get(key) ?? record.point);
      return key;
    });
    let plannedJobs: number | null = null;
    if (refineMetric !== undefined) {
      const design = new AdaptiveJobs(sweep).design(refineOutcomes);
      plannedJobs = design.trials;
      // The design's points in its order (starting grid, then midpoints as found), with its replicates.
      const planned = new Map<string, OpenGroup>();
      for (const { point, replicates } of design.points) {
        const key = keyOf(point);
        const group = planned.get(key) ?? { values: valuesOf(point), planned: 0, summary: new GroupSummary() };
        group.planned += replicates;
        planned.set(key, group);
      }
      groups.clear();
      for (const [key, group] of planned) groups.set(key, group);
    }
    for (const [key, summary] of aggregation.groups) {
      const group = groups.get(key);
      if (group !== undefined) group.summary = summary;
      else {
        const values = unplanned.get(key);
        if (values !== undefined) groups.set(key, { values, planned: 0, summary });
      }
    }
    const knownMetrics = ['success', ...[...aggregation.metricKinds.keys()].sort()];
    checkMetric(settings.metric, knownMetrics, options.metric !== undefined);
    const metric: ShownMetric = {
      name: settings.metric,
      kind: settings.metric === 'success' ? 'boolean' : (aggregation.metricKinds.get(settings.metric) ?? 'number'),
    };
    const trialsFile = recorder?.finish() === true ? recorder.path : null;
    return {
      trialsFile,
      trialMetrics: [...new Set([...declared, ...aggregation.metricKinds.keys()])].sort(),
      sweep,
      source,
      dir: options.dir,
      settings,
      columns: [...names, ...computed].map((n) => ({ name: n, label: label(n) })),
      computed,
      groups: [...groups.values()],
      metricKinds: aggregation.metricKinds,
      metric,
      pooled: names.filter((n) => n !== settings.x && n !== settings.y && n !== settings.facet),
      diagramKind: diagramKindOf(spec, settings),
      plannedJobs: plannedJobs ?? countJobs(sweep),
      completedJobs: aggregation.records,
      failedJobs: failedKeys.size,
      failuresByKind: [...attemptsByKind.entries()].sort((a, b) => b[1] - a[1]),
      warnings,
      warningCount,
      label,
      paramInfo: model.paramInfo,
    };
  } catch (error) {
    recorder?.discard();
    throw error;
  }
}
