import type { ParamInfo } from '../../../shared/model.js';
import { shellWord } from '../../shell-text.js';
import { type Axis, cellLabel, formatValue } from '../axis.js';
import { buildCellGrids, type CellData } from '../cell-grid.js';
import type { CollectedReport } from '../collect.js';
import { withUnit } from '../param-label.js';
import { renderPhaseDiagram } from '../phase-diagram.js';
import { svgToPng } from '../png.js';
import { buildCellLayout, type CellLayout } from '../report-layout.js';
import { MAX_FACET_BINS } from '../report-settings.js';
import { rowBorders } from '../row-borders.js';
import { diagramFigure, diagramSection, slug } from './figure.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/**
 * Heat maps, one per facet value: the points pooled into cells (grid
 * values, or bins of continuous ranges), the 50% border of rates with its
 * band from the cells' Wilson intervals.
 */
export const phaseDiagrams: ReportChart = {
  id: 'phase-diagrams',
  pageRank: 10,
  render(report, want): ChartOutput {
    if (report.diagramKind !== 'cells') return { files: [], section: null };
    const layout = cellLayoutOf(report);
    const { metric, sweep } = report;
    const { spec, model } = sweep;
    const { xAxis, yAxis, facetAxis } = layout;
    const files: Array<[string, string | Uint8Array]> = [];
    const figures: string[] = [];
    let incompleteCells = 0;
    let emptyCells = 0;
    if (xAxis !== null) {
      const grids = buildCellGrids(report.groups, layout, metric);
      const isRate = metric.kind === 'boolean';
      let domain: [number, number] = [0, 1];
      if (!isRate) {
        const values = grids.flatMap((g) => g.cells.map((c) => c.value)).filter((v): v is number => v !== null);
        domain = values.length === 0 ? [0, 1] : [Math.min(...values), Math.max(...values)];
      }
      const valueLabel = metricLabel(metric.name, isRate);
      const info = model.paramInfo;
      const describeCell = (cell: CellData): string => {
        const parts = [onAxis(xAxis, cell.x, info)];
        if (yAxis !== null) parts.push(onAxis(yAxis, cell.y, info));
        return parts.join(', ');
      };
      const adaptive = spec.refine !== undefined;
      const level = borderLevel(report);
      const inspectCommand = (key: string): string => `recallscape inspect ${shellWord(report.dir)} --job ${key}`;
      for (const grid of grids) {
        const facetText = facetAxis === null ? null : onAxis(facetAxis, grid.facet, info);
        const done = grid.cells.reduce((s, c) => s + c.n, 0);
        const planned = grid.cells.reduce((s, c) => s + c.planned, 0);
        const subtitle = [
          ...(facetText === null ? [] : [facetText]),
          `${done} of ${planned} planned trials${report.pooled.length > 0 ? `; pooled over ${report.pooled.join(', ')}` : ''}${layout.binned ? `; ${spec.sampler.kind} sample binned` : ''}`,
        ];
        const id = `d${grid.facet}`;
        const rendered = renderPhaseDiagram({
          id,
          title: `${spec.name}: ${valueLabel} (${model.id})`,
          subtitle,
          grid,
          xAxis,
          yAxis,
          xLabel: report.label(xAxis.param),
          yLabel: yAxis === null ? '' : report.label(yAxis.param),
          valueLabel,
          isRate,
          domain,
          border: isRate ? level : null,
          describeCell,
          inspectCommand,
          ...(adaptive ? { rowCells: true, rowBorders: isRate ? rowBorders(grid, xAxis, level) : [] } : {}),
        });
        incompleteCells += rendered.incompleteCount;
        emptyCells += rendered.emptyCount;
        const base =
          facetAxis === null
            ? `phase-${slug(metric.name)}`
            : `phase-${slug(metric.name)}-${slug(facetAxis.param)}-${facetAxis.kind === 'bins' ? `bin${grid.facet + 1}` : slug(formatValue(facetAxis.values[grid.facet] ?? grid.facet))}`;
        const written: string[] = [];
        if (want('svg')) {
          files.push([`${base}.svg`, `<?xml version="1.0" encoding="UTF-8"?>\n${rendered.svg}\n`]);
          written.push(`${base}.svg`);
        }
        if (want('png')) {
          files.push([`${base}.png`, svgToPng(rendered.svg, report.settings.pngScale)]);
          written.push(`${base}.png`);
        }
        const caption = [
          `${facetText ?? `${valueLabel} over ${xAxis.param}${yAxis === null ? '' : ` and ${yAxis.param}`}`}.`,
          report.pooled.length > 0 ? `Each cell pools the points of every ${report.pooled.join(', ')}.` : null,
          isRate && !rendered.borderDrawn ? noBorderReason(grid.cells) : null,
          isRate && rendered.bandDrawn
            ? 'Light dashed band: cells whose 95% Wilson interval contains 50%, so the border may lie anywhere inside it.'
            : null,
          cellCounts(rendered.cellCount, rendered.incompleteCount, rendered.emptyCount),
        ];
        figures.push(
          diagramFigure({
            id,
            svg: rendered.svg,
            caption: caption.filter((c): c is string => c !== null).join(' '),
            files: written,
            data: { cells: rendered.cellCount, incomplete: rendered.incompleteCount, empty: rendered.emptyCount },
          }),
        );
      }
    }
    return { files, section: diagramSection(figures), incompleteCells, emptyCells };
  },
};

/** The cell layout of the report's axes. */
export function cellLayoutOf(report: CollectedReport): CellLayout {
  const { settings } = report;
  return buildCellLayout({
    vary: report.sweep.spec.vary,
    x: settings.x,
    y: settings.y,
    facet: settings.facet,
    bins: settings.bins,
    facetBins: Math.min(settings.bins, MAX_FACET_BINS),
    log: settings.log,
    // An adaptive sweep's midpoints are values of their own on the axes.
    ...(report.sweep.spec.refine === undefined ? {} : { occurring: report.groups.map((g) => g.values) }),
  });
}

/** The rate level of the border: the adaptive sweep's own, else 50%. */
export function borderLevel(report: CollectedReport): number {
  return report.sweep.spec.refine?.level ?? 0.5;
}

/** Legend and title name of the shown metric. */
export function metricLabel(name: string, isRate: boolean): string {
  return name === 'success' ? 'success rate' : isRate ? `${name} (rate)` : `mean ${name}`;
}

/** Why a rate panel has no 50% border, in words for its caption. */
function noBorderReason(cells: readonly CellData[]): string {
  const rates = cells.map((c) => c.value).filter((v): v is number => v !== null);
  if (rates.length === 0) return 'No 50% border: no cell has trials yet.';
  if (rates.every((r) => r >= 0.5)) return 'No 50% border: every cell’s rate is at least 50%.';
  if (rates.every((r) => r < 0.5)) return 'No 50% border: every cell’s rate is below 50%.';
  return 'No 50% border: the cells above and below 50% are not neighbours with data.';
}

function cellCounts(cells: number, incomplete: number, empty: number): string {
  const parts = [`${cells} cells`];
  parts.push(incomplete === 0 ? 'none short of planned trials' : `${incomplete} with fewer trials than planned`);
  if (empty > 0) parts.push(`${empty} without trials yet`);
  return `${parts.join('; ')}.`;
}

/** "tauZPre = 50 ms", "patternOverlap in [0.25, 0.5) (fraction of hypercolumns)". */
function onAxis(axis: Axis, index: number, info: Readonly<Record<string, ParamInfo>>): string {
  return `${axis.param} ${axis.kind === 'bins' ? 'in' : '='} ${withUnit(cellLabel(axis, index), axis.param, info)}`;
}
