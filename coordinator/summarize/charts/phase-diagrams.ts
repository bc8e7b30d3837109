import type { ParamInfo } from '../../../shared/model.js';
import { type Axis, axisSize, cellLabel, formatValue } from '../axis.js';
import { buildCellGrids, type CellData } from '../cell-grid.js';
import { valueUnit } from '../param-label.js';
import { renderPhaseDiagram } from '../phase-diagram.js';
import { svgToPng } from '../png.js';
import { escapeXml } from '../svg-util.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/** One heat map per facet value: the groups pooled into cells, with the 50% border of rates. */
export const phaseDiagrams: ReportChart = {
  id: 'phase-diagrams',
  pageRank: 10,
  render(report, want): ChartOutput {
    const { layout, metric, sweep } = report;
    const { spec, model } = sweep;
    const { xAxis, yAxis, facetAxis } = layout;
    const files: Array<[string, string | Uint8Array]> = [];
    const figures: string[] = [];
    let incompleteCells = 0;
    if (xAxis !== null) {
      const nx = axisSize(xAxis);
      const ny = yAxis === null ? 1 : axisSize(yAxis);
      const facets = facetAxis === null ? 1 : axisSize(facetAxis);
      const grids = buildCellGrids(report.groups, { nx, ny, facets }, metric);
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
      const pooled = report.pooled;
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
          border: isRate ? 0.5 : null,
          describeCell,
        });
        incompleteCells += rendered.incompleteCount;
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
          files.push([`${base}.png`, svgToPng(rendered.svg)]);
          written.push(`${base}.png`);
        }
        const caption = facetText ?? `${valueLabel} over ${xAxis.param}${yAxis === null ? '' : ` and ${yAxis.param}`}`;
        const links = written.map((f) => `<a href="${escapeXml(f)}">${escapeXml(f)}</a>`).join(', ');
        figures.push(
          [
            `<figure id="figure-${escapeXml(id)}" data-cells="${rendered.cellCount}" data-incomplete="${rendered.incompleteCount}">`,
            rendered.svg,
            `<figcaption>${escapeXml(caption)}. ${rendered.incompleteCount} of ${rendered.cellCount} cells have fewer trials than planned.${links === '' ? '' : ` Files: ${links}.`}</figcaption></figure>`,
          ].join('\n'),
        );
      }
    }
    const section = [
      '<h2>Phase diagrams</h2>',
      ...(figures.length === 0 ? ['<p>No diagram: the sweep varies no parameter.</p>'] : figures),
    ].join('\n');
    return { files, section, incompleteCells };
  },
};

/** A file-name-safe piece of text. */
function slug(text: string): string {
  return (
    text
      .replace(/[^A-Za-z0-9._-]+/g, '_')
      .replace(/^_+|_+$/g, '')
      .slice(0, 60) || 'x'
  );
}

/** A cell's value with its unit ("50 ms"), or its bin ("[20, 40) ms"). */
function describeOnAxis(axis: Axis, index: number, info: Readonly<Record<string, ParamInfo>>): string {
  const unit = valueUnit(axis.param, info);
  const text = cellLabel(axis, index);
  return unit === '' ? text : `${text} ${unit}`;
}
