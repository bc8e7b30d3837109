import { type Axis, cellLabel } from './axis.js';
import type { CellData, CellGrid } from './cell-grid.js';
import { colourScale } from './colour-scale.js';
import { isoLines } from './contour.js';
import { escapeXml, FONT_FAMILY, px, textWidth } from './svg-util.js';

export interface PhaseDiagramInput {
  /** Unique among the diagrams of one page: prefixes element ids. */
  readonly id: string;
  readonly title: string;
  readonly subtitle: readonly string[];
  readonly grid: CellGrid;
  readonly xAxis: Axis;
  /** Null when the sweep varies one parameter: one row of cells. */
  readonly yAxis: Axis | null;
  readonly xLabel: string;
  readonly yLabel: string;
  /** Legend title, e.g. "success rate". */
  readonly valueLabel: string;
  /** Whether values are rates with Wilson intervals (true) or means (false). */
  readonly isRate: boolean;
  readonly domain: readonly [number, number];
  /** Draw the iso-line at this value (0.5 for rates), or null for none. */
  readonly border: number | null;
  /** Text for the hover title of a cell: parameter values of that cell. */
  readonly describeCell: (cell: CellData) => string;
}

export interface RenderedSvg {
  readonly svg: string;
  readonly width: number;
  readonly height: number;
  readonly cellCount: number;
  readonly incompleteCount: number;
}

const FONT = 13;
const TICK_FONT = 11;
const LEGEND_WIDTH = 190;

function fmt(v: number | null, digits = 3): string {
  return v === null ? '' : String(Number(v.toFixed(digits)));
}

/** Show every k-th label so neighbours never overlap. */
function labelStep(labels: readonly string[], spacing: number, fontSize: number): number {
  const widest = Math.max(0, ...labels.map((l) => textWidth(l, fontSize)));
  return Math.max(1, Math.ceil((widest + 6) / Math.max(1, spacing)));
}

export function cellTitle(input: PhaseDiagramInput, cell: CellData): string {
  const where = input.describeCell(cell);
  const done = `${cell.n} of ${cell.planned} planned trials`;
  if (cell.value === null) return `${where}\nno data yet (${done})`;
  if (input.isRate) {
    return `${where}\n${input.valueLabel} ${fmt(cell.value)} (${cell.hits}/${cell.metricCount}), 95% Wilson interval ${fmt(cell.lo)} to ${fmt(cell.hi)}\n${done}`;
  }
  const sd = cell.sd === null ? '' : `, sd ${fmt(cell.sd, 4)}`;
  return `${where}\nmean ${input.valueLabel} ${fmt(cell.value, 4)}${sd} over ${cell.metricCount} trials; ${cell.successes} successes\n${done}`;
}

/**
 * One heat map: cells coloured by the shown value, incomplete cells hatched,
 * empty cells white, the border (iso-line) drawn over them, axes with names
 * and units, and a legend. Each cell carries its numbers as data attributes
 * and a <title> so the report page and any SVG viewer can show them on hover.
 */
export function renderPhaseDiagram(input: PhaseDiagramInput): RenderedSvg {
  const { grid, xAxis, yAxis } = input;
  const nx = grid.nx;
  const ny = grid.ny;
  const cellW = Math.max(16, Math.min(64, Math.round(440 / nx)));
  const cellH = Math.max(16, Math.min(64, Math.round(340 / ny)));
  const plotW = nx * cellW;
  const plotH = ny * cellH;
  const xLabels = Array.from({ length: xAxis.kind === 'values' ? nx : nx + 1 }, (_, i) => edgeOrCellLabel(xAxis, i));
  const yLabels =
    yAxis === null
      ? []
      : Array.from({ length: yAxis.kind === 'values' ? ny : ny + 1 }, (_, i) => edgeOrCellLabel(yAxis, i));
  const yLabelWidth = Math.max(0, ...yLabels.map((l) => textWidth(l, TICK_FONT)));
  const left = Math.round(30 + yLabelWidth + 14);
  const top = 30 + 18 * (1 + input.subtitle.length);
  const bottom = 62;
  const legendX = left + plotW + 28;
  const legendH = Math.max(120, Math.min(plotH, 220));
  const width = legendX + LEGEND_WIDTH;
  // Legend: bar, then up to three marks of 24 px each.
  const height = Math.max(top + plotH + bottom, top + legendH + 26 + 24 * (input.border === null ? 2 : 3));
  const scale = colourScale(input.domain);
  const id = input.id;

  const out: string[] = [];
  out.push(
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="${FONT_FAMILY}" font-size="${FONT}" class="phase-diagram" data-nx="${nx}" data-ny="${ny}" data-cell-w="${cellW}" data-cell-h="${cellH}" data-plot-left="${left}" data-plot-top="${top}">`,
  );
  out.push(`<title>${escapeXml(input.title)}</title>`);
  out.push('<defs>');
  // Two-tone hatching stays visible on the dark and the light end of the scale.
  out.push(
    `<pattern id="${id}-hatch" patternUnits="userSpaceOnUse" width="7" height="7" patternTransform="rotate(45)"><rect width="7" height="7" fill="none"/><line x1="1" y1="0" x2="1" y2="7" stroke="#ffffff" stroke-width="1.6" stroke-opacity="0.85"/><line x1="2.6" y1="0" x2="2.6" y2="7" stroke="#000000" stroke-width="1.2" stroke-opacity="0.7"/></pattern>`,
  );
  out.push(`<clipPath id="${id}-clip"><rect x="${left}" y="${top}" width="${plotW}" height="${plotH}"/></clipPath>`);
  const stops = Array.from({ length: 11 }, (_, i) => {
    const t = i / 10;
    const v = scale.domain[0] + t * (scale.domain[1] - scale.domain[0]);
    return `<stop offset="${t}" stop-color="${scale.colour(v)}"/>`;
  }).join('');
  out.push(`<linearGradient id="${id}-ramp" x1="0" y1="1" x2="0" y2="0">${stops}</linearGradient>`);
  out.push('</defs>');
  out.push(`<rect width="${width}" height="${height}" fill="#ffffff"/>`);

  // Title and subtitle lines.
  out.push(`<text x="${left}" y="24" font-size="15" font-weight="bold">${escapeXml(input.title)}</text>`);
  input.subtitle.forEach((line, i) => {
    out.push(`<text x="${left}" y="${24 + 18 * (i + 1)}" fill="#333333">${escapeXml(line)}</text>`);
  });

  // Cells.
  let incomplete = 0;
  out.push(`<g class="cells">`);
  for (const cell of grid.cells) {
    const x = left + cell.x * cellW;
    const y = top + (ny - 1 - cell.y) * cellH;
    const empty = cell.value === null;
    const isIncomplete = cell.n < cell.planned;
    if (isIncomplete) incomplete += 1;
    const classes = ['cell', empty ? 'empty' : 'filled', isIncomplete ? 'incomplete' : 'complete'].join(' ');
    const fill = empty ? '#ffffff' : scale.colour(cell.value ?? 0);
    const attrs = [
      `class="${classes}"`,
      `x="${x}"`,
      `y="${y}"`,
      `width="${cellW}"`,
      `height="${cellH}"`,
      `fill="${fill}"`,
      empty ? 'stroke="#c8c8c8" stroke-width="0.8"' : `stroke="${fill}" stroke-width="0.5"`,
      `data-x="${cell.x}"`,
      `data-y="${cell.y}"`,
      `data-n="${cell.n}"`,
      `data-planned="${cell.planned}"`,
      `data-successes="${cell.successes}"`,
      `data-value="${fmt(cell.value, 6)}"`,
      `data-lo="${fmt(cell.lo, 6)}"`,
      `data-hi="${fmt(cell.hi, 6)}"`,
      `data-where="${escapeXml(input.describeCell(cell))}"`,
    ];
    out.push(`<rect ${attrs.join(' ')}><title>${escapeXml(cellTitle(input, cell))}</title></rect>`);
  }
  out.push('</g>');
  // Hatching over incomplete cells, in its own layer so hover still hits the cell.
  out.push(`<g class="incomplete-marks" pointer-events="none">`);
  for (const cell of grid.cells) {
    if (cell.n >= cell.planned) continue;
    const x = left + cell.x * cellW;
    const y = top + (ny - 1 - cell.y) * cellH;
    out.push(`<rect x="${x}" y="${y}" width="${cellW}" height="${cellH}" fill="url(#${id}-hatch)"/>`);
  }
  out.push('</g>');
  out.push(
    `<rect x="${left}" y="${top}" width="${plotW}" height="${plotH}" fill="none" stroke="#222222" stroke-width="1"/>`,
  );

  // The border line: white casing under a black line, visible on every colour.
  if (input.border !== null) {
    const values = grid.cells.map((c) => c.value);
    const lines = isoLines(values, nx, ny, input.border);
    if (lines.length > 0) {
      const d = lines
        .map((line) =>
          line
            .map(([u, v], i) => `${i === 0 ? 'M' : 'L'}${px(left + u * cellW)},${px(top + (ny - v) * cellH)}`)
            .join(''),
        )
        .join('');
      out.push(`<g class="border" clip-path="url(#${id}-clip)" pointer-events="none">`);
      out.push(
        `<path d="${d}" fill="none" stroke="#ffffff" stroke-width="5" stroke-linejoin="round" stroke-linecap="round"/>`,
      );
      out.push(
        `<path class="border-line" d="${d}" fill="none" stroke="#000000" stroke-width="2.2" stroke-linejoin="round" stroke-linecap="round" data-level="${input.border}"/>`,
      );
      out.push('</g>');
    }
  }

  // x axis: ticks at cell centres for values, at edges for bins.
  out.push(`<g class="x-axis" font-size="${TICK_FONT}" text-anchor="middle">`);
  const xSpacing = cellW;
  const xStep = labelStep(xLabels, xSpacing, TICK_FONT);
  xLabels.forEach((label, i) => {
    const x = left + (xAxis.kind === 'values' ? (i + 0.5) * cellW : i * cellW);
    out.push(`<line x1="${px(x)}" y1="${top + plotH}" x2="${px(x)}" y2="${top + plotH + 5}" stroke="#222222"/>`);
    if (i % xStep === 0) out.push(`<text x="${px(x)}" y="${top + plotH + 18}">${escapeXml(label)}</text>`);
  });
  out.push('</g>');
  out.push(
    `<text class="x-title" x="${px(left + plotW / 2)}" y="${top + plotH + 44}" text-anchor="middle">${escapeXml(input.xLabel)}</text>`,
  );

  if (yAxis !== null) {
    out.push(`<g class="y-axis" font-size="${TICK_FONT}" text-anchor="end">`);
    const yStep = Math.max(1, Math.ceil(15 / cellH));
    yLabels.forEach((label, i) => {
      const y = top + plotH - (yAxis.kind === 'values' ? (i + 0.5) * cellH : i * cellH);
      out.push(`<line x1="${left - 5}" y1="${px(y)}" x2="${left}" y2="${px(y)}" stroke="#222222"/>`);
      if (i % yStep === 0) out.push(`<text x="${left - 8}" y="${px(y + 4)}">${escapeXml(label)}</text>`);
    });
    out.push('</g>');
    const cy = top + plotH / 2;
    out.push(
      `<text class="y-title" x="18" y="${px(cy)}" text-anchor="middle" transform="rotate(-90 18 ${px(cy)})">${escapeXml(input.yLabel)}</text>`,
    );
  }

  // Legend: colour bar with ticks, then the marks.
  out.push(`<g class="legend">`);
  out.push(`<text x="${legendX}" y="${top - 8}" font-weight="bold">${escapeXml(input.valueLabel)}</text>`);
  out.push(
    `<rect x="${legendX}" y="${top}" width="18" height="${legendH}" fill="url(#${id}-ramp)" stroke="#222222" stroke-width="0.8"/>`,
  );
  const [d0, d1] = scale.domain;
  for (const t of scale.ticks(5)) {
    const y = top + legendH - ((t - d0) / (d1 - d0)) * legendH;
    out.push(`<line x1="${legendX + 18}" y1="${px(y)}" x2="${legendX + 23}" y2="${px(y)}" stroke="#222222"/>`);
    out.push(
      `<text x="${legendX + 27}" y="${px(y + 4)}" font-size="${TICK_FONT}">${escapeXml(String(Number(t.toPrecision(6))))}</text>`,
    );
  }
  let ly = top + legendH + 26;
  if (input.border !== null) {
    out.push(`<line x1="${legendX}" y1="${ly}" x2="${legendX + 22}" y2="${ly}" stroke="#ffffff" stroke-width="5"/>`);
    out.push(`<line x1="${legendX}" y1="${ly}" x2="${legendX + 22}" y2="${ly}" stroke="#000000" stroke-width="2.2"/>`);
    const what = input.isRate ? `${Math.round(input.border * 100)}% border` : `border at ${input.border}`;
    out.push(`<text x="${legendX + 30}" y="${ly + 4}" font-size="${TICK_FONT + 1}">${escapeXml(what)}</text>`);
    ly += 24;
  }
  out.push(`<rect x="${legendX}" y="${ly - 8}" width="22" height="16" fill="#7f7f7f"/>`);
  out.push(
    `<rect x="${legendX}" y="${ly - 8}" width="22" height="16" fill="url(#${id}-hatch)" stroke="#222222" stroke-width="0.6"/>`,
  );
  out.push(`<text x="${legendX + 30}" y="${ly + 4}" font-size="${TICK_FONT + 1}">fewer trials than planned</text>`);
  ly += 24;
  out.push(`<rect x="${legendX}" y="${ly - 8}" width="22" height="16" fill="#ffffff" stroke="#c8c8c8"/>`);
  out.push(`<text x="${legendX + 30}" y="${ly + 4}" font-size="${TICK_FONT + 1}">no data</text>`);
  out.push('</g>');
  out.push('</svg>');
  return { svg: out.join('\n'), width, height, cellCount: grid.cells.length, incompleteCount: incomplete };
}

function edgeOrCellLabel(axis: Axis, i: number): string {
  if (axis.kind === 'values') return cellLabel(axis, i);
  const edge = axis.edges[i];
  if (edge === undefined) return '';
  return String(Number(edge.toPrecision(3)));
}
