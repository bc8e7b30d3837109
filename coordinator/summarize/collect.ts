import type { ParamInfo } from '../../shared/model.js';
import type { FailureKind } from '../../shared/schemas/records.js';
import { countJobs } from '../../shared/sweep/expand.js';
import type { LoadedSweep } from '../../shared/sweep/load.js';
import { iteratePoints } from '../../shared/sweep/points.js';
import { aggregateRecords } from './aggregate.js';
import type { ShownMetric } from './cell-grid.js';
import { GroupSummary, type MetricKind } from './group-summary.js';
import { paramLabel } from './param-label.js';
import type { ReportGroup } from './report-group.js';
import { allBinnedPlaces, buildLayout, type GroupPlace, type ReportLayout } from './report-layout.js';
import {
  checkMetric,
  MAX_FACET_BINS,
  type ReportFormat,
  type ResolvedSettings,
  resolveSettings,
} from './report-settings.js';
import type { ReportSource, ScanWarning } from './report-source.js';

export interface ReportOptions {
  readonly dir: string;
  readonly x?: string;
  readonly y?: string;
  readonly facet?: string;
  readonly metric?: string;
  readonly formats?: readonly ReportFormat[];
  readonly bins?: number;
}

export type ReportSweep = LoadedSweep & { readonly codeVersion: string; readonly createdAt: string };

/** Everything the charts and the page draw from: read once, rendered by many. */
export interface CollectedReport {
  readonly sweep: ReportSweep;
  readonly settings: ResolvedSettings;
  readonly layout: ReportLayout;
  /** Table order: the sweep's point order (grid), or facet, y, x (bins, empty ones included). */
  readonly groups: readonly ReportGroup[];
  /** Every scalar metric of the records except `success`, with how it is summarised. */
  readonly metricKinds: ReadonlyMap<string, MetricKind>;
  /** The metric the diagrams show. */
  readonly metric: ShownMetric;
  /** Varied parameters on no axis and no facet: the diagrams pool over them. */
  readonly pooled: readonly string[];
  readonly plannedJobs: number;
  readonly completedJobs: number;
  /** Jobs with a failed attempt and no result. */
  readonly failedJobs: number;
  /** Failed attempts by kind, most frequent first. */
  readonly failuresByKind: readonly (readonly [FailureKind, number])[];
  /** The first MAX_WARNINGS_KEPT problems met while reading the shards. */
  readonly warnings: readonly ScanWarning[];
  /** How many there were in all; may exceed `warnings.length`. */
  readonly warningCount: number;
  /** `name (unit)` of a parameter, for axis titles and table headers. */
  label(param: string): string;
  readonly paramInfo: Readonly<Record<string, ParamInfo>>;
}

/** Warnings kept in full; beyond this only counted. */
const MAX_WARNINGS_KEPT = 200;

interface OpenGroup {
  readonly place: GroupPlace;
  planned: number;
  summary: GroupSummary;
}

/**
 * Resolve the axes and stream the failures and the records once into one
 * summary per group. Throws InputError for a bad option before anything is
 * written; `--metric` is checked after the scan, when the metrics are known.
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
    },
    spec.report,
    sweep.variedNames,
  );
  const label = (p: string): string => paramLabel(p, model.paramInfo);
  const layout = buildLayout({
    sampler: spec.sampler.kind,
    vary: spec.vary,
    variedNames: sweep.variedNames,
    x: settings.x,
    y: settings.y,
    facet: settings.facet,
    bins: settings.bins,
    facetBins: Math.min(settings.bins, MAX_FACET_BINS),
    label,
  });

  // Planned trials per group, in the sweep's order (empty bins included).
  const groups = new Map<string, OpenGroup>();
  if (layout.binned) {
    for (const { key, ...place } of allBinnedPlaces(layout))
      groups.set(key, { place, planned: 0, summary: new GroupSummary() });
  }
  for (const point of iteratePoints(sweep)) {
    const key = layout.keyOf(point);
    if (key === null) continue;
    let group = groups.get(key);
    if (group === undefined) {
      const place = layout.place(point);
      if (place === null) continue;
      group = { place, planned: 0, summary: new GroupSummary() };
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

  // Records of points the sweep does not plan (an edited sweep) still count, with planned = 0.
  const unplanned = new Map<string, GroupPlace>();
  const aggregation = await aggregateRecords(source.records({ onWarning }), (record) => {
    if (failedKeys.size > 0) failedKeys.delete(record.key);
    const key = layout.keyOf(record.point);
    if (key !== null && !groups.has(key) && !unplanned.has(key)) {
      const place = layout.place(record.point);
      if (place === null) return null;
      unplanned.set(key, place);
    }
    return key;
  });
  for (const [key, summary] of aggregation.groups) {
    const group = groups.get(key);
    if (group !== undefined) group.summary = summary;
    else {
      const place = unplanned.get(key);
      if (place !== undefined) groups.set(key, { place, planned: 0, summary });
    }
  }
  const knownMetrics = ['success', ...[...aggregation.metricKinds.keys()].sort()];
  checkMetric(settings.metric, knownMetrics, options.metric !== undefined);
  const metric: ShownMetric = {
    name: settings.metric,
    kind: settings.metric === 'success' ? 'boolean' : (aggregation.metricKinds.get(settings.metric) ?? 'number'),
  };

  return {
    sweep,
    settings,
    layout,
    groups: [...groups.values()].map((g) => ({ ...g.place, planned: g.planned, summary: g.summary })),
    metricKinds: aggregation.metricKinds,
    metric,
    pooled: sweep.variedNames.filter((n) => n !== settings.x && n !== settings.y && n !== settings.facet),
    plannedJobs: countJobs(sweep),
    completedJobs: aggregation.records,
    failedJobs: failedKeys.size,
    failuresByKind: [...attemptsByKind.entries()].sort((a, b) => b[1] - a[1]),
    warnings,
    warningCount,
    label,
    paramInfo: model.paramInfo,
  };
}
