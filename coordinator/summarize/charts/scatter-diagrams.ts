import { wilsonInterval } from '../../../shared/wilson.js';
import { shellWord } from '../../shell-text.js';
import { formatNumber, formatValue } from '../axis.js';
import { type BinomialPoint, unitCoordinate } from '../local-likelihood-data.js';
import { smoothSuccessField } from '../local-likelihood-field.js';
import { withUnit } from '../param-label.js';
import { svgToPng } from '../png.js';
import type { ReportGroup } from '../report-group.js';
import { MAX_FACET_BINS } from '../report-settings.js';
import { renderScatterDiagram, type ScatterMarker } from '../scatter-diagram.js';
import { type ScatterAxis, scatterLayout } from '../scatter-layout.js';
import { diagramFigure, diagramSection, slug } from './figure.js';
import { metricLabel } from './phase-diagrams.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/** Cells of the smooth field per axis: fine enough for a smooth contour, cheap to estimate. */
const FIELD_CELLS = 40;

/** Trials and "successes" of the shown metric at one point: `success`, or another boolean metric's true values. */
function counts(group: ReportGroup, metric: string): { trials: number; hits: number } {
  const s = group.summary;
  if (metric === 'success') return { trials: s.n, hits: s.successes };
  const stats = s.metrics.get(metric);
  if (stats === undefined) return { trials: 0, hits: 0 };
  return { trials: stats.count, hits: Math.round(stats.mean * stats.count) };
}

function unit(axis: ScatterAxis, value: number): number {
  return unitCoordinate(value, axis.lo, axis.hi, axis.log);
}

/**
 * Random, lhs and sobol sweeps: every sampled point as a marker coloured by
 * its own rate, over a smooth estimate of the success probability (local
 * likelihood, docs/smoothing.md) with its 50% contour and the band where the
 * estimate's 95% interval contains 50%. Panels split a facet only while each
 * keeps enough points; a panel that cannot is replaced by words saying so.
 */
export const scatterDiagrams: ReportChart = {
  id: 'scatter-diagrams',
  pageRank: 10,
  render(report, want): ChartOutput {
    if (report.diagramKind !== 'scatter') return { files: [], section: null };
    const { settings, metric, sweep } = report;
    const { spec, model } = sweep;
    if (settings.x === null || settings.y === null) return { files: [], section: diagramSection([]) };
    const layout = scatterLayout({
      vary: spec.vary,
      x: settings.x,
      y: settings.y,
      facet: settings.facet,
      maxPanels: Math.min(settings.bins, MAX_FACET_BINS),
      groups: report.groups,
      pooled: report.pooled,
      log: settings.log,
    });
    if (layout === null) return { files: [], section: diagramSection([]) };
    const isRate = metric.kind === 'boolean';
    const valueLabel = metricLabel(metric.name, isRate);
    const files: Array<[string, string | Uint8Array]> = [];
    const figures: string[] = [];
    let domain: [number, number] = [0, 1];
    if (!isRate) {
      const means = report.groups
        .map((g) => g.summary.metrics.get(metric.name)?.meanOrNull() ?? null)
        .filter((v): v is number => v !== null);
      if (means.length > 0) domain = [Math.min(...means), Math.max(...means)];
    }
    const info = model.paramInfo;
    const inspect = (key: string): string => `recallscape inspect ${shellWord(report.dir)} --job ${key}`;
    layout.panels.forEach((panel, k) => {
      const id = `s${k}`;
      const base = `phase-${slug(metric.name)}${panel.fileTag === null || settings.facet === null ? '' : `-${slug(settings.facet)}-${slug(panel.fileTag)}`}`;
      const pooledText =
        layout.pooled.length > 0
          ? `Pooled over ${layout.pooled.join(', ')}: points that differ only there share a panel.`
          : null;
      if (panel.skipped !== null) {
        figures.push(
          diagramFigure({
            id,
            svg: null,
            caption: `${panel.facetText ?? 'All points'}: no panel drawn, ${panel.skipped}.`,
            files: [],
            data: { points: panel.groups.length, skipped: 'too-few-points' },
          }),
        );
        return;
      }
      const markers = panel.groups.map((g) =>
        marker(g, layout.xAxis, layout.yAxis, metric.name, isRate, info, inspect),
      );
      const trials = panel.groups.reduce((s, g) => s + g.summary.n, 0);
      const planned = panel.groups.reduce((s, g) => s + g.planned, 0);
      let fieldNote: string;
      let field = null;
      let bandwidth: number | null = null;
      if (isRate) {
        const points: BinomialPoint[] = panel.groups.map((g) => {
          const c = counts(g, metric.name);
          return {
            x: unit(layout.xAxis, g.values[layout.xAxis.param] as number),
            y: unit(layout.yAxis, g.values[layout.yAxis.param] as number),
            trials: c.trials,
            successes: c.hits,
          };
        });
        const smooth = smoothSuccessField(points, { nx: FIELD_CELLS, ny: FIELD_CELLS });
        if (smooth.ok) {
          field = smooth;
          bandwidth = smooth.bandwidth;
          fieldNote = `Background: smooth estimate of the probability (local logistic regression, Gaussian kernel of bandwidth ${formatNumber(Number(smooth.bandwidth.toPrecision(2)))} of each axis range, chosen by leave-one-out likelihood; see docs/report.md).`;
        } else {
          fieldNote = `No smooth estimate: ${smooth.reason}.`;
        }
      } else {
        fieldNote = 'No smooth field: it is estimated for rates only; the markers show each point’s mean.';
      }
      const rendered = renderScatterDiagram({
        id,
        title: `${spec.name}: ${valueLabel} (${model.id})`,
        subtitle: [
          ...(panel.facetText === null ? [] : [panel.facetText]),
          `${panel.groups.length} sampled points, ${trials} of ${planned} planned trials${layout.pooled.length > 0 ? `; pooled over ${layout.pooled.join(', ')}` : ''}`,
          ...(bandwidth === null
            ? []
            : [`smooth field: local logistic, bandwidth ${formatNumber(Number(bandwidth.toPrecision(2)))}`]),
        ],
        xAxis: layout.xAxis,
        yAxis: layout.yAxis,
        xLabel: report.label(layout.xAxis.param),
        yLabel: report.label(layout.yAxis.param),
        valueLabel,
        domain,
        markers,
        field,
        border: isRate ? 0.5 : null,
      });
      const written: string[] = [];
      if (want('svg')) {
        files.push([`${base}.svg`, `<?xml version="1.0" encoding="UTF-8"?>\n${rendered.svg}\n`]);
        written.push(`${base}.svg`);
      }
      if (want('png')) {
        files.push([`${base}.png`, svgToPng(rendered.svg, settings.pngScale)]);
        written.push(`${base}.png`);
      }
      const borderNote =
        !isRate || field === null
          ? null
          : rendered.borderDrawn
            ? `Black line: where the estimate crosses 50%.${rendered.bandDrawn ? ' Light dashed band: where its 95% interval contains 50%, so the border may lie anywhere inside.' : ' Its 95% interval excludes 50% everywhere.'}`
            : `No 50% border: the estimate is ${field.p.every((p) => p === null || p >= 0.5) ? 'at or above' : 'below'} 50% everywhere in the panel${rendered.bandDrawn ? ', though its 95% interval contains 50% inside the light dashed band' : ''}.`;
      const caption = [
        `${panel.facetText ?? `${valueLabel} over ${layout.xAxis.param} and ${layout.yAxis.param}`}.`,
        `Markers: the ${panel.groups.length} sampled points, each coloured by its own ${isRate ? 'rate' : 'mean'}.`,
        fieldNote,
        borderNote,
        pooledText,
        layout.facetNote,
      ];
      figures.push(
        diagramFigure({
          id,
          svg: rendered.svg,
          caption: caption.filter((c): c is string => c !== null).join(' '),
          files: written,
          data: {
            points: panel.groups.length,
            field: field === null ? 'none' : 'smooth',
            border: rendered.borderDrawn ? 'drawn' : 'none',
            band: rendered.bandDrawn ? 'drawn' : 'none',
          },
        }),
      );
    });
    return { files, section: diagramSection(figures) };
  },
};

/** A panel's marker for one point, with the numbers its tooltip shows. */
function marker(
  g: ReportGroup,
  xAxis: ScatterAxis,
  yAxis: ScatterAxis,
  metric: string,
  isRate: boolean,
  info: Parameters<typeof withUnit>[2],
  inspect: (key: string) => string,
): ScatterMarker {
  const s = g.summary;
  const c = counts(g, metric);
  const ci = isRate ? wilsonInterval(c.hits, c.trials) : null;
  const value = isRate ? (c.trials === 0 ? null : c.hits / c.trials) : (s.metrics.get(metric)?.meanOrNull() ?? null);
  const where = Object.entries(g.values)
    .map(([name, v]) => `${name} = ${withUnit(formatValue(v), name, info)}`)
    .join(', ');
  const lines = [where];
  if (value === null) lines.push('no trials yet');
  else if (ci !== null)
    lines.push(
      `rate ${value.toFixed(3)} (${c.hits}/${c.trials}), 95% Wilson interval ${ci.lo.toFixed(3)} to ${ci.hi.toFixed(3)}`,
    );
  else lines.push(`mean ${value.toPrecision(4)} over ${s.metrics.get(metric)?.count ?? 0} trials`);
  lines.push(`${s.n} of ${g.planned} planned trials`);
  if (s.failureKey !== null) lines.push(`re-run a trial without success: ${inspect(s.failureKey)}`);
  if (s.successKey !== null) lines.push(`re-run a successful trial: ${inspect(s.successKey)}`);
  return {
    u: unit(xAxis, g.values[xAxis.param] as number),
    v: unit(yAxis, g.values[yAxis.param] as number),
    value,
    title: lines.join('\n'),
    data: {
      where,
      n: String(s.n),
      planned: String(g.planned),
      successes: String(s.successes),
      value: value === null ? '' : String(Number(value.toFixed(6))),
      lo: ci === null ? '' : String(Number(ci.lo.toFixed(6))),
      hi: ci === null ? '' : String(Number(ci.hi.toFixed(6))),
      'success-job': s.successKey ?? '',
      'failure-job': s.failureKey ?? '',
    },
  };
}
