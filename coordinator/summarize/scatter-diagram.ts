import { scaleLinear, scaleLog } from 'd3-scale';
import { colourScale } from './colour-scale.js';
import { isoLines, isoRegion } from './contour.js';
import {
  bandPaths,
  borderPaths,
  LEGEND_WIDTH,
  type LegendMark,
  legend,
  MARK_STEP,
  markerCircle,
  pathData,
  TICK_FONT,
} from './diagram-parts.js';
import type { ScatterAxis } from './scatter-layout.js';
import { escapeXml, FONT_FAMILY, px, textWidth } from './svg-util.js';

/** One sampled point: where it is (unit square), what it shows, and what its tooltip says. */
export interface ScatterMarker {
  readonly u: number;
  readonly v: number;
  /** Its own rate or mean; null without trials. */
  readonly value: number | null;
  /** Data attributes for the page's tooltip (name without `data-`). */
  readonly data: Readonly<Record<string, string>>;
  readonly title: string;
}

/** A smooth estimate on an nx x ny grid of cells over the unit square (row-major, y outer). */
export interface ScatterField {
  readonly nx: number;
  readonly ny: number;
  readonly p: readonly (number | null)[];
  readonly lo: readonly (number | null)[];
  readonly hi: readonly (number | null)[];
}

export interface ScatterDiagramInput {
  readonly id: string;
  readonly title: string;
  readonly subtitle: readonly string[];
  readonly xAxis: ScatterAxis;
  readonly yAxis: ScatterAxis;
  readonly xLabel: string;
  readonly yLabel: string;
  readonly valueLabel: string;
  readonly domain: readonly [number, number];
  readonly markers: readonly ScatterMarker[];
  /** The smooth field, or null when there is none (the caption says why). */
  readonly field: ScatterField | null;
  /** Draw the field's iso-line and interval band at this level, or null. */
  readonly border: number | null;
}

export interface RenderedScatter {
  readonly svg: string;
  readonly width: number;
  readonly height: number;
  readonly borderDrawn: boolean;
  readonly bandDrawn: boolean;
  /** Field cells without an estimate (drawn blank). */
  readonly blankCells: number;
}

const FONT = 13;
const PLOT_W = 440;
const PLOT_H = 340;

function axisScale(axis: ScatterAxis, range: [number, number]) {
  return axis.log
    ? scaleLog().domain([axis.lo, axis.hi]).range(range)
    : scaleLinear().domain([axis.lo, axis.hi]).range(range);
}

function tickText(t: number): string {
  return String(Number(t.toPrecision(3)));
}

/**
 * Round ticks inside the axis range; on a log axis at most about six, so
 * labels never crowd; whole numbers only on a whole-number axis (its ends
 * when no round whole number lies inside).
 */
function ticksOf(axis: ScatterAxis, scale: ReturnType<typeof axisScale>): number[] {
  let ticks = scale.ticks(6).filter((t) => t >= axis.lo && t <= axis.hi);
  if (axis.whole) {
    ticks = ticks.filter(Number.isInteger);
    if (ticks.length < 2) ticks = axis.lo === axis.hi ? [axis.lo] : [axis.lo, axis.hi];
  }
  if (!axis.log || ticks.length <= 7) return ticks;
  const step = Math.ceil(ticks.length / 6);
  return ticks.filter((_, i) => i % step === 0);
}

/**
 * Scattered points over a smooth field: the field's cells coloured by the
 * estimated probability, its 50% contour and the band where its 95% interval
 * contains 50%, then every sampled point as a ringed marker coloured by its
 * own rate, axes in the parameters' units, and a legend of what is drawn.
 */
export function renderScatterDiagram(input: ScatterDiagramInput): RenderedScatter {
  const { xAxis, yAxis, field } = input;
  const xs0 = axisScale(xAxis, [0, PLOT_W]);
  const ys0 = axisScale(yAxis, [PLOT_H, 0]);
  const xTicks = ticksOf(xAxis, xs0);
  const yTicks = ticksOf(yAxis, ys0);
  const yLabelWidth = Math.max(0, ...yTicks.map((t) => textWidth(tickText(t), TICK_FONT)));
  const left = Math.round(30 + yLabelWidth + 14);
  const top = 30 + 18 * (1 + input.subtitle.length);
  const bottom = 62;
  const legendX = left + PLOT_W + 28;
  const legendH = 220;
  const width = legendX + LEGEND_WIDTH;
  const scale = colourScale(input.domain);
  const id = input.id;

  const level = input.border;
  const borderLines = field === null || level === null ? [] : isoLines(field.p, field.nx, field.ny, level);
  const bandRings =
    field === null || level === null
      ? []
      : isoRegion(
          field.lo.map((lo, i) => {
            const hi = field.hi[i];
            return lo === null || hi === null || hi === undefined ? null : Math.min(level - lo, hi - level);
          }),
          field.nx,
          field.ny,
          0,
        );
  const blankCells = field === null ? 0 : field.p.filter((p) => p === null).length;
  const marks: LegendMark[] = [];
  if (input.markers.length > 0) marks.push({ kind: 'marker', text: 'sampled point, its own rate' });
  if (borderLines.length > 0 && level !== null)
    marks.push({ kind: 'border', text: `${Math.round(level * 100)}% contour of the estimate` });
  if (bandRings.length > 0) marks.push({ kind: 'band', text: '95% interval holds 50%' });
  if (blankCells > 0) marks.push({ kind: 'empty', text: 'no estimate (no points near)' });
  const height = Math.max(top + PLOT_H + bottom, top + legendH + 26 + MARK_STEP * marks.length);

  const out: string[] = [];
  out.push(
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="${FONT_FAMILY}" font-size="${FONT}" class="phase-diagram scatter-diagram" data-points="${input.markers.length}" data-plot-left="${left}" data-plot-top="${top}" data-plot-width="${PLOT_W}" data-plot-height="${PLOT_H}">`,
  );
  out.push(`<title>${escapeXml(input.title)}</title>`);
  out.push(
    `<defs><clipPath id="${id}-clip"><rect x="${left}" y="${top}" width="${PLOT_W}" height="${PLOT_H}"/></clipPath></defs>`,
  );
  out.push(`<rect width="${width}" height="${height}" fill="#ffffff"/>`);
  out.push(`<text x="${left}" y="24" font-size="15" font-weight="bold">${escapeXml(input.title)}</text>`);
  input.subtitle.forEach((line, i) => {
    out.push(`<text x="${left}" y="${24 + 18 * (i + 1)}" fill="#333333">${escapeXml(line)}</text>`);
  });

  if (field !== null) {
    const cw = PLOT_W / field.nx;
    const ch = PLOT_H / field.ny;
    out.push(`<g class="field" data-nx="${field.nx}" data-ny="${field.ny}" shape-rendering="crispEdges">`);
    for (let j = 0; j < field.ny; j++) {
      for (let i = 0; i < field.nx; i++) {
        const p = field.p[j * field.nx + i];
        const fill = p === null || p === undefined ? '#f1f1f1' : scale.colour(p);
        // Each cell overlaps its right and upper neighbour by a hair, so no seams show between them.
        out.push(
          `<rect x="${px(left + i * cw)}" y="${px(top + PLOT_H - (j + 1) * ch)}" width="${px(cw + 0.3)}" height="${px(ch + 0.3)}" fill="${fill}"/>`,
        );
      }
    }
    out.push('</g>');
    const at = ([u, v]: readonly [number, number]): [number, number] => [
      left + (u / field.nx) * PLOT_W,
      top + PLOT_H - (v / field.ny) * PLOT_H,
    ];
    if (bandRings.length > 0) {
      out.push(`<g class="band" clip-path="url(#${id}-clip)" pointer-events="none">`);
      out.push(...bandPaths(pathData(bandRings, at, true)));
      out.push('</g>');
    }
    if (borderLines.length > 0 && level !== null) {
      out.push(`<g class="border" clip-path="url(#${id}-clip)" pointer-events="none">`);
      out.push(...borderPaths(pathData(borderLines, at), level));
      out.push('</g>');
    }
  }
  out.push(
    `<rect x="${left}" y="${top}" width="${PLOT_W}" height="${PLOT_H}" fill="none" stroke="#222222" stroke-width="1"/>`,
  );

  out.push('<g class="points">');
  for (const m of input.markers) {
    const x = left + m.u * PLOT_W;
    const y = top + (1 - m.v) * PLOT_H;
    const data = Object.entries(m.data)
      .map(([k, v]) => `data-${k}="${escapeXml(v)}"`)
      .join(' ');
    out.push(`<circle cx="${px(x)}" cy="${px(y)}" r="6.4" fill="#ffffff" pointer-events="none"/>`);
    out.push(
      markerCircle(x, y, m.value === null ? '#ffffff' : scale.colour(m.value), `class="point" ${data}`).replace(
        '/>',
        `><title>${escapeXml(m.title)}</title></circle>`,
      ),
    );
  }
  out.push('</g>');

  out.push(`<g class="x-axis" font-size="${TICK_FONT}" text-anchor="middle">`);
  for (const t of xTicks) {
    const x = left + xs0(t);
    out.push(`<line x1="${px(x)}" y1="${top + PLOT_H}" x2="${px(x)}" y2="${top + PLOT_H + 5}" stroke="#222222"/>`);
    out.push(`<text x="${px(x)}" y="${top + PLOT_H + 18}">${escapeXml(tickText(t))}</text>`);
  }
  out.push('</g>');
  out.push(
    `<text class="x-title" x="${px(left + PLOT_W / 2)}" y="${top + PLOT_H + 44}" text-anchor="middle">${escapeXml(input.xLabel + (xAxis.log ? ', log scale' : ''))}</text>`,
  );
  out.push(`<g class="y-axis" font-size="${TICK_FONT}" text-anchor="end">`);
  for (const t of yTicks) {
    const y = top + ys0(t);
    out.push(`<line x1="${left - 5}" y1="${px(y)}" x2="${left}" y2="${px(y)}" stroke="#222222"/>`);
    out.push(`<text x="${left - 8}" y="${px(y + 4)}">${escapeXml(tickText(t))}</text>`);
  }
  out.push('</g>');
  const cy = top + PLOT_H / 2;
  out.push(
    `<text class="y-title" x="18" y="${px(cy)}" text-anchor="middle" transform="rotate(-90 18 ${px(cy)})">${escapeXml(input.yLabel + (yAxis.log ? ', log scale' : ''))}</text>`,
  );
  out.push(...legend({ id, x: legendX, top, barHeight: legendH, title: input.valueLabel, scale, marks }).svg);
  out.push('</svg>');
  return {
    svg: out.join('\n'),
    width,
    height,
    borderDrawn: borderLines.length > 0,
    bandDrawn: bandRings.length > 0,
    blankCells,
  };
}
