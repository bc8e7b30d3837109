import { join } from 'node:path';
import { writeFileAtomic } from '../../shared/atomic-write.js';
import type { FailureKind } from '../../shared/schemas/records.js';
import { countJobs, iteratePoints } from '../../shared/sweep/expand.js';
import { aggregateRecords } from './aggregate.js';
import { type Axis, axisSize, cellLabel, formatValue } from './axis.js';
import { buildCellGrids, type CellData, type PlacedGroup, type ShownMetric } from './cell-grid.js';
import { GroupSummary } from './group-summary.js';
import { paramLabel, valueUnit } from './param-label.js';
import { type RenderedSvg, renderPhaseDiagram } from './phase-diagram.js';
import { svgToPng } from './png.js';
import { allBinnedPlaces, buildLayout, type GroupPlace } from './report-layout.js';
import { type PageDiagram, renderReportPage } from './report-page.js';
import { checkMetric, MAX_FACET_BINS, type ReportFormat, resolveSettings } from './report-settings.js';
import type { ReportSource, ScanWarning } from './report-source.js';
import { buildTable, type TableRow, toCsv, toMarkdown } from './tables.js';

export interface ReportOptions {
  readonly dir: string;
  readonly x?: string;
  readonly y?: string;
  readonly facet?: string;
  readonly metric?: string;
  readonly formats?: readonly ('csv' | 'md' | 'svg' | 'png' | 'html')[];
  readonly bins?: number;
}

export interface ReportResult {
  readonly reportDir: string;
  readonly indexHtml: string | null;
  readonly files: readonly string[];
  readonly completedJobs: number;
  readonly plannedJobs: number;
  /** Jobs with a failed attempt and no result. */
  readonly failedJobs: number;
  /** Torn lines, conflicts and other problems met while reading the shards (the first MAX_WARNINGS_KEPT). */
  readonly warnings: readonly ScanWarning[];
  /** How many warnings there were in all; may exceed `warnings.length`. */
  readonly warningCount: number;
  /** Diagram cells with fewer trials than planned, over all facets. */
  readonly incompleteCells: number;
}

/** Warnings kept in full; beyond this only counted. */
const MAX_WARNINGS_KEPT = 200;

function slug(text: string): string {
  return (
    text
      .replace(/[^A-Za-z0-9._-]+/g, '_')
      .replace(/^_+|_+$/g, '')
      .slice(0, 60) || 'x'
  );
}

interface Group {
  readonly place: GroupPlace;
  planned: number;
  summary: GroupSummary;
}

/**
 * The whole report from any record source: resolve the axes, stream the
 * records once into per-point (or per-bin) summaries, then render tables,
 * diagrams and the page in memory and only then write them, each atomically,
 * so bad input or a failure midway leaves the previous report untouched.
 */
export async function buildReportFrom(source: ReportSource, options: ReportOptions): Promise<ReportResult> {
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
  const groups = new Map<string, Group>();
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
  const plannedJobs = countJobs(sweep);

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

  const pointOf = new Map<string, GroupPlace>();
  const aggregation = await aggregateRecords(source.records({ onWarning }), (record) => {
    if (failedKeys.size > 0) failedKeys.delete(record.key);
    const key = layout.keyOf(record.point);
    if (key !== null && !groups.has(key) && !pointOf.has(key)) {
      const place = layout.place(record.point);
      if (place === null) return null;
      pointOf.set(key, place);
    }
    return key;
  });
  for (const [key, summary] of aggregation.groups) {
    const group = groups.get(key);
    if (group !== undefined) group.summary = summary;
    else {
      const place = pointOf.get(key);
      if (place !== undefined) groups.set(key, { place, planned: 0, summary });
    }
  }
  const knownMetrics = ['success', ...[...aggregation.metricKinds.keys()].sort()];
  checkMetric(settings.metric, knownMetrics, options.metric !== undefined);
  const metric: ShownMetric = {
    name: settings.metric,
    kind: settings.metric === 'success' ? 'boolean' : (aggregation.metricKinds.get(settings.metric) ?? 'number'),
  };
  const completedJobs = aggregation.records;
  const failuresByKind = [...attemptsByKind.entries()].sort((a, b) => b[1] - a[1]);

  // Tables.
  const rows: TableRow[] = [...groups.values()].map((g) => ({
    dims: g.place.dims,
    planned: g.planned,
    summary: g.summary,
  }));
  const table = buildTable(layout.dims, rows, aggregation.metricKinds);
  const outputs = new Map<string, string | Uint8Array>();
  const want = (f: ReportFormat): boolean => settings.formats.has(f);
  const tableName = layout.binned ? 'bins' : 'points';
  if (want('csv')) outputs.set(`${tableName}.csv`, toCsv(table));
  if (want('md'))
    outputs.set(`${tableName}.md`, toMarkdown(table, `${spec.name}: per-${layout.binned ? 'bin' : 'point'} summary`));

  // Diagrams, one per facet value.
  const diagrams: PageDiagram[] = [];
  let incompleteCells = 0;
  const { xAxis, yAxis, facetAxis } = layout;
  if (xAxis !== null) {
    const nx = axisSize(xAxis);
    const ny = yAxis === null ? 1 : axisSize(yAxis);
    const facets = facetAxis === null ? 1 : axisSize(facetAxis);
    const placed: PlacedGroup[] = [...groups.values()].map((g) => ({
      x: g.place.x,
      y: g.place.y,
      facet: g.place.facet,
      planned: g.planned,
      summary: g.summary,
    }));
    const grids = buildCellGrids(placed, { nx, ny, facets }, metric);
    const isRate = metric.kind === 'boolean';
    let domain: [number, number] = [0, 1];
    if (!isRate) {
      const values = grids.flatMap((g) => g.cells.map((c) => c.value)).filter((v): v is number => v !== null);
      domain = values.length === 0 ? [0, 1] : [Math.min(...values), Math.max(...values)];
    }
    const valueLabel =
      metric.name === 'success' ? 'success rate' : isRate ? `${metric.name} (rate)` : `mean ${metric.name}`;
    const describeCell = (cell: CellData): string => {
      const parts = [
        `${xAxis.param} ${xAxis.kind === 'bins' ? 'in' : '='} ${describeOnAxis(xAxis, cell.x, model.paramInfo)}`,
      ];
      if (yAxis !== null)
        parts.push(
          `${yAxis.param} ${yAxis.kind === 'bins' ? 'in' : '='} ${describeOnAxis(yAxis, cell.y, model.paramInfo)}`,
        );
      return parts.join(', ');
    };
    const pooled = sweep.variedNames.filter((n) => n !== settings.x && n !== settings.y && n !== settings.facet);
    for (const grid of grids) {
      const facetText =
        facetAxis === null
          ? null
          : `${facetAxis.param} ${facetAxis.kind === 'bins' ? 'in' : '='} ${describeOnAxis(facetAxis, grid.facet, model.paramInfo)}`;
      const done = grid.cells.reduce((s, c) => s + c.n, 0);
      const planned = grid.cells.reduce((s, c) => s + c.planned, 0);
      const subtitle = [
        ...(facetText === null ? [] : [facetText]),
        `${done} of ${planned} planned trials${pooled.length > 0 ? `; pooled over ${pooled.join(', ')}` : ''}${layout.binned ? `; ${spec.sampler.kind} sample binned` : ''}`,
      ];
      const id = `d${grid.facet}`;
      const rendered: RenderedSvg = renderPhaseDiagram({
        id,
        title: `${spec.name}: ${valueLabel} (${model.id})`,
        subtitle,
        grid,
        xAxis,
        yAxis,
        xLabel: label(xAxis.param),
        yLabel: yAxis === null ? '' : label(yAxis.param),
        valueLabel,
        isRate,
        domain,
        border: isRate ? 0.5 : null,
        describeCell,
      });
      incompleteCells += rendered.incompleteCount;
      const base =
        facetAxis === null
          ? `phase-${slug(metric.name)}`
          : `phase-${slug(metric.name)}-${slug(facetAxis.param)}-${facetAxis.kind === 'bins' ? `bin${grid.facet + 1}` : slug(formatValue(facetAxis.values[grid.facet] ?? grid.facet))}`;
      const files: string[] = [];
      if (want('svg')) {
        outputs.set(`${base}.svg`, `<?xml version="1.0" encoding="UTF-8"?>\n${rendered.svg}\n`);
        files.push(`${base}.svg`);
      }
      if (want('png')) {
        outputs.set(`${base}.png`, svgToPng(rendered.svg));
        files.push(`${base}.png`);
      }
      diagrams.push({
        id,
        caption: facetText ?? `${valueLabel} over ${xAxis.param}${yAxis === null ? '' : ` and ${yAxis.param}`}`,
        svg: rendered.svg,
        files,
        cellCount: rendered.cellCount,
        incompleteCount: rendered.incompleteCount,
      });
    }
  }

  const reportDir = source.reportDir;
  let indexHtml: string | null = null;
  if (want('html')) {
    const html = renderReportPage({
      name: spec.name,
      model: `${model.id} ${model.version}`,
      source: sweep.source,
      hash: sweep.hash,
      codeVersion: sweep.codeVersion,
      createdAt: sweep.createdAt,
      generatedAt: new Date().toISOString(),
      sampler:
        spec.sampler.kind === 'grid'
          ? 'grid'
          : `${spec.sampler.kind}, ${spec.sampler.points} points, ${settings.bins} bins per axis`,
      replicates: spec.replicates,
      plannedJobs,
      completedJobs,
      failedJobs: failedKeys.size,
      failuresByKind,
      axes: { x: settings.x, y: settings.y, facet: settings.facet, metric: metric.name },
      pooled: sweep.variedNames.filter((n) => n !== settings.x && n !== settings.y && n !== settings.facet),
      warnings,
      warningCount,
      diagrams,
      table: table.display,
      tableFile: want('csv') ? `${tableName}.csv` : null,
      binned: layout.binned,
    });
    outputs.set('index.html', html);
    indexHtml = join(reportDir, 'index.html');
  }

  const files: string[] = [];
  for (const [name, data] of outputs) {
    const path = join(reportDir, name);
    await writeFileAtomic(path, data);
    files.push(path);
  }
  return {
    reportDir,
    indexHtml,
    files,
    completedJobs,
    plannedJobs,
    failedJobs: failedKeys.size,
    warnings,
    warningCount,
    incompleteCells,
  };
}

/** A cell's value with its unit ("50 ms"), or its bin ("[20, 40) ms"). */
function describeOnAxis(axis: Axis, index: number, info: Parameters<typeof valueUnit>[1]): string {
  const unit = valueUnit(axis.param, info);
  const text = cellLabel(axis, index);
  return unit === '' ? text : `${text} ${unit}`;
}
