import { type Axis, cellLabel } from './axis.js';
import { type AxisGeometry, axisGeometry, rowCellSpans, valuePixel } from './axis-geometry.js';
import type { CellData, CellGrid } from './cell-grid.js';
import { colourScale } from './colour-scale.js';
import { isoLines, isoRegion } from './contour.js';
import {
  bandPaths,
  borderPaths,
  hatchDef,
  LEGEND_WIDTH,
  type LegendMark,
  legend,
  MARK_STEP,
  pathData,
  TICK_FONT,
} from './diagram-parts.js';
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
  /** The command that re-runs the trial with this key, for tooltips; omitted: no such line. */
  readonly inspectCommand?: (key: string) => string;
  /**
   * Cells sized within their own row (adaptive sweeps): a cell reaches halfway
   * to the nearest cell of its row that has a point, and cells without a point
   * in a row are not drawn, so refined rows show narrow cells.
   */
  readonly rowCells?: boolean;
  /**
   * The border as estimated per row (index y) instead of contoured over the
   * cells: its crossing and interval along x, null where the row has none.
   */
  readonly rowBorders?: ReadonlyArray<RowCrossing | null>;
}

/** Where a row's rate crosses the border level along x, with the interval of the crossing (null: open). */
export interface RowCrossing {
  readonly x: number | null;
  readonly lo: number | null;
  readonly hi: number | null;
}

export interface RenderedSvg {
  readonly svg: string;
  readonly width: number;
  readonly height: number;
  readonly cellCount: number;
  /** Cells with some trials but fewer than planned (hatched). */
  readonly incompleteCount: number;
  /** Cells the sweep plans trials for that have none yet. */
  readonly emptyCount: number;
  readonly borderDrawn: boolean;
  readonly bandDrawn: boolean;
}

const FONT = 13;

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
  if (cell.value === null) return `${where}\nno trials yet (${done})`;
  const lines = [where];
  if (input.isRate) {
    lines.push(
      `${input.valueLabel} ${fmt(cell.value)} (${cell.hits}/${cell.metricCount}), 95% Wilson interval ${fmt(cell.lo)} to ${fmt(cell.hi)}`,
    );
  } else {
    const sd = cell.sd === null ? '' : `, sd ${fmt(cell.sd, 4)}`;
    lines.push(
      `mean ${input.valueLabel} ${fmt(cell.value, 4)}${sd} over ${cell.metricCount} trials; ${cell.successes} successes`,
    );
  }
  lines.push(done);
  const command = input.inspectCommand;
  if (command !== undefined) {
    if (cell.failureKey !== null) lines.push(`re-run a trial without success: ${command(cell.failureKey)}`);
    if (cell.successKey !== null) lines.push(`re-run a successful trial: ${command(cell.successKey)}`);
  }
  return lines.join('\n');
}

/**
 * One heat map: cells coloured by the shown value, incomplete cells hatched,
 * empty cells white, the border (iso-line) and, for rates, the band where
 * the cells' 95% Wilson intervals contain the border level drawn over them,
 * axes with names and units, and a legend of what this panel shows. Each
 * cell carries its numbers as data attributes and a <title>, so the report
 * page and any SVG viewer can show them.
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
  const scale = colourScale(input.domain);
  const id = input.id;
  const xg = axisGeometry(xAxis, plotW);
  const yg: AxisGeometry =
    yAxis === null
      ? { edges: [0, plotH], centres: [plotH / 2], even: true, at: (v) => v * plotH }
      : axisGeometry(yAxis, plotH);
  // Cells of evenly spaced axes keep the plain arithmetic, so their drawing does not change by a digit.
  const at =
    xg.even && yg.even
      ? ([u, v]: readonly [number, number]): [number, number] => [left + u * cellW, top + (ny - v) * cellH]
      : ([u, v]: readonly [number, number]): [number, number] => [left + xg.at(u), top + plotH - yg.at(v)];
  const cellBox = (
    cx: number,
    cy: number,
  ): { x: number | string; y: number | string; w: number | string; h: number | string } => {
    const span = rowSpans.get(cy)?.get(cx);
    if (span === undefined && xg.even && yg.even)
      return { x: left + cx * cellW, y: top + (ny - 1 - cy) * cellH, w: cellW, h: cellH };
    const [x0, x1] = span ?? [xg.edges[cx] as number, xg.edges[cx + 1] as number];
    const y0 = yg.edges[cy] as number;
    const y1 = yg.edges[cy + 1] as number;
    return { x: px(left + x0), y: px(top + plotH - y1), w: px(x1 - x0), h: px(y1 - y0) };
  };

  // Row-sized cells: only the cells with a point in their row are drawn, each up to halfway to its neighbours there.
  const rowSpans = new Map<number, Map<number, [number, number]>>();
  if (input.rowCells === true) {
    for (let y = 0; y < ny; y++) {
      const present = grid.cells.filter((c) => c.y === y && (c.n > 0 || c.planned > 0)).map((c) => c.x);
      rowSpans.set(
        y,
        rowCellSpans(
          xg,
          present.sort((a, b) => a - b),
        ),
      );
    }
  }
  const drawn = input.rowCells === true ? grid.cells.filter((c) => rowSpans.get(c.y)?.has(c.x) === true) : grid.cells;
  const incompleteCells = drawn.filter((c) => c.n > 0 && c.n < c.planned);
  const emptyCount = drawn.filter((c) => c.n === 0).length;
  const values = grid.cells.map((c) => c.value);
  const level = input.border;
  const rowBorders = input.rowBorders;
  const borderLines = level === null || rowBorders !== undefined ? [] : isoLines(values, nx, ny, level);
  // The band: where lo <= level <= hi, i.e. min(level - lo, hi - level) >= 0.
  const bandRings =
    level === null || !input.isRate || borderLines.length === 0
      ? []
      : isoRegion(
          grid.cells.map((c) => (c.lo === null || c.hi === null ? null : Math.min(level - c.lo, c.hi - level))),
          nx,
          ny,
          0,
        );
  const rowDrawing = rowBorders === undefined || level === null ? null : rowBorderDrawing(rowBorders, xAxis, xg, yg);

  const borderDrawn = borderLines.length > 0 || (rowDrawing?.lines.length ?? 0) > 0;
  const bandDrawn = bandRings.length > 0 || (rowDrawing?.bands.length ?? 0) > 0;
  const marks: LegendMark[] = [];
  if (borderDrawn && level !== null)
    marks.push({ kind: 'border', text: input.isRate ? `${Math.round(level * 100)}% border` : `border at ${level}` });
  if (bandDrawn)
    marks.push({
      kind: 'band',
      text:
        rowDrawing !== null
          ? '95% interval of the crossing'
          : `95% interval holds ${Math.round((level ?? 0.5) * 100)}%`,
    });
  if (incompleteCells.length > 0) marks.push({ kind: 'incomplete' });
  if (emptyCount > 0) {
    const unplanned = drawn.filter((c) => c.n === 0 && c.planned === 0).length;
    const text = unplanned === 0 ? 'no trials yet' : unplanned === emptyCount ? 'no point sampled here' : 'no trials';
    marks.push({ kind: 'empty', text });
  }
  const height = Math.max(top + plotH + bottom, top + legendH + 26 + MARK_STEP * marks.length);

  const out: string[] = [];
  out.push(
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="${FONT_FAMILY}" font-size="${FONT}" class="phase-diagram" data-nx="${nx}" data-ny="${ny}" data-cell-w="${cellW}" data-cell-h="${cellH}" data-plot-left="${left}" data-plot-top="${top}">`,
  );
  out.push(`<title>${escapeXml(input.title)}</title>`);
  out.push('<defs>');
  if (incompleteCells.length > 0) out.push(hatchDef(id));
  out.push(`<clipPath id="${id}-clip"><rect x="${left}" y="${top}" width="${plotW}" height="${plotH}"/></clipPath>`);
  out.push('</defs>');
  out.push(`<rect width="${width}" height="${height}" fill="#ffffff"/>`);

  out.push(`<text x="${left}" y="24" font-size="15" font-weight="bold">${escapeXml(input.title)}</text>`);
  input.subtitle.forEach((line, i) => {
    out.push(`<text x="${left}" y="${24 + 18 * (i + 1)}" fill="#333333">${escapeXml(line)}</text>`);
  });

  out.push(`<g class="cells">`);
  for (const cell of drawn) {
    const box = cellBox(cell.x, cell.y);
    const empty = cell.n === 0;
    const classes = ['cell', empty ? 'empty' : 'filled', !empty && cell.n < cell.planned ? 'incomplete' : 'complete'];
    const fill = cell.value === null ? '#ffffff' : scale.colour(cell.value);
    const attrs = [
      `class="${classes.join(' ')}"`,
      `x="${box.x}"`,
      `y="${box.y}"`,
      `width="${box.w}"`,
      `height="${box.h}"`,
      `fill="${fill}"`,
      cell.value === null ? 'stroke="#c8c8c8" stroke-width="0.8"' : `stroke="${fill}" stroke-width="0.5"`,
      `data-x="${cell.x}"`,
      `data-y="${cell.y}"`,
      `data-n="${cell.n}"`,
      `data-planned="${cell.planned}"`,
      `data-successes="${cell.successes}"`,
      `data-value="${fmt(cell.value, 6)}"`,
      `data-lo="${fmt(cell.lo, 6)}"`,
      `data-hi="${fmt(cell.hi, 6)}"`,
      `data-where="${escapeXml(input.describeCell(cell))}"`,
      `data-success-job="${cell.successKey ?? ''}"`,
      `data-failure-job="${cell.failureKey ?? ''}"`,
    ];
    out.push(`<rect ${attrs.join(' ')}><title>${escapeXml(cellTitle(input, cell))}</title></rect>`);
  }
  out.push('</g>');
  // Hatching over incomplete cells, in its own layer so hover still hits the cell.
  if (incompleteCells.length > 0) {
    out.push(`<g class="incomplete-marks" pointer-events="none">`);
    for (const cell of incompleteCells) {
      const box = cellBox(cell.x, cell.y);
      out.push(`<rect x="${box.x}" y="${box.y}" width="${box.w}" height="${box.h}" fill="url(#${id}-hatch)"/>`);
    }
    out.push('</g>');
  }
  out.push(
    `<rect x="${left}" y="${top}" width="${plotW}" height="${plotH}" fill="none" stroke="#222222" stroke-width="1"/>`,
  );

  if (rowDrawing !== null && level !== null) {
    if (rowDrawing.bands.length > 0) {
      out.push(`<g class="band" clip-path="url(#${id}-clip)" pointer-events="none">`);
      const d = rowDrawing.bands
        .map(
          ([x0, x1, y0, y1]) =>
            `M${px(left + x0)},${px(top + plotH - y1)}H${px(left + x1)}V${px(top + plotH - y0)}H${px(left + x0)}Z`,
        )
        .join('');
      out.push(...bandPaths(d));
      out.push('</g>');
    }
    if (rowDrawing.lines.length > 0) {
      out.push(`<g class="border" clip-path="url(#${id}-clip)" pointer-events="none">`);
      const d = rowDrawing.lines
        .map((line) => line.map(([x, y], i) => `${i === 0 ? 'M' : 'L'}${px(left + x)},${px(top + plotH - y)}`).join(''))
        .join('');
      out.push(...borderPaths(d, level));
      out.push('</g>');
    }
  }
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

  // x axis: ticks at cell centres for values, at edges for bins.
  out.push(`<g class="x-axis" font-size="${TICK_FONT}" text-anchor="middle">`);
  const xTicks = xLabels.map((_, i) => left + tickAt(xAxis, xg, i));
  const xShown = shownLabels(xLabels, xTicks, xg.even ? labelStep(xLabels, cellW, TICK_FONT) : null, (l) =>
    textWidth(l, TICK_FONT),
  );
  xLabels.forEach((label, i) => {
    const x = xTicks[i] as number;
    out.push(`<line x1="${px(x)}" y1="${top + plotH}" x2="${px(x)}" y2="${top + plotH + 5}" stroke="#222222"/>`);
    if (xShown[i]) out.push(`<text x="${px(x)}" y="${top + plotH + 18}">${escapeXml(label)}</text>`);
  });
  out.push('</g>');
  out.push(
    `<text class="x-title" x="${px(left + plotW / 2)}" y="${top + plotH + 44}" text-anchor="middle">${escapeXml(input.xLabel + logNote(xAxis))}</text>`,
  );

  if (yAxis !== null) {
    out.push(`<g class="y-axis" font-size="${TICK_FONT}" text-anchor="end">`);
    const yTicks = yLabels.map((_, i) => top + plotH - tickAt(yAxis, yg, i));
    const yShown = shownLabels(yLabels, yTicks, yg.even ? Math.max(1, Math.ceil(15 / cellH)) : null, () => 15);
    yLabels.forEach((label, i) => {
      const y = yTicks[i] as number;
      out.push(`<line x1="${left - 5}" y1="${px(y)}" x2="${left}" y2="${px(y)}" stroke="#222222"/>`);
      if (yShown[i]) out.push(`<text x="${left - 8}" y="${px(y + 4)}">${escapeXml(label)}</text>`);
    });
    out.push('</g>');
    const cy = top + plotH / 2;
    out.push(
      `<text class="y-title" x="18" y="${px(cy)}" text-anchor="middle" transform="rotate(-90 18 ${px(cy)})">${escapeXml(input.yLabel + logNote(yAxis))}</text>`,
    );
  }

  out.push(...legend({ id, x: legendX, top, barHeight: legendH, title: input.valueLabel, scale, marks }).svg);
  out.push('</svg>');
  return {
    svg: out.join('\n'),
    width,
    height,
    cellCount: drawn.length,
    incompleteCount: incompleteCells.length,
    emptyCount: drawn.filter((c) => c.n === 0 && c.planned > 0).length,
    borderDrawn,
    bandDrawn,
  };
}

function edgeOrCellLabel(axis: Axis, i: number): string {
  if (axis.kind === 'values') return cellLabel(axis, i);
  const edge = axis.edges[i];
  if (edge === undefined) return '';
  return String(Number(edge.toPrecision(3)));
}

/** Ticks sit at cell centres for values, at edges for bins. */
function tickAt(axis: Axis, geometry: AxisGeometry, i: number): number {
  return (axis.kind === 'values' ? geometry.centres[i] : geometry.edges[i]) ?? 0;
}

/** Said after an axis title drawn in log space. */
function logNote(axis: Axis): string {
  return axis.log ? ', log scale' : '';
}

/**
 * Which tick labels to print: every k-th on evenly spaced axes (as always),
 * otherwise from the first, each one that keeps clear of the last printed.
 */
function shownLabels(
  labels: readonly string[],
  at: readonly number[],
  step: number | null,
  size: (label: string) => number,
): boolean[] {
  if (step !== null) return labels.map((_, i) => i % step === 0);
  const shown: boolean[] = [];
  let last: { centre: number; half: number } | null = null;
  labels.forEach((label, i) => {
    const centre = at[i] as number;
    const half = size(label) / 2;
    const fits = last === null || Math.abs(centre - last.centre) >= last.half + half + 6;
    shown.push(fits);
    if (fits) last = { centre, half };
  });
  return shown;
}

/**
 * A border estimated per row, in plot pixels (x from the left, y from the
 * bottom): a line through each row's crossing at the row's middle, run to the
 * row's outer edges where it starts and ends, broken where a row has no
 * crossing; and per row a band from the interval's ends (an open end runs to
 * the plot's edge).
 */
function rowBorderDrawing(
  rows: ReadonlyArray<RowCrossing | null>,
  xAxis: Axis,
  xg: AxisGeometry,
  yg: AxisGeometry,
): { lines: Array<Array<[number, number]>>; bands: Array<[number, number, number, number]> } {
  const width = xg.edges[xg.edges.length - 1] ?? 0;
  const lines: Array<Array<[number, number]>> = [];
  const bands: Array<[number, number, number, number]> = [];
  let line: Array<[number, number]> = [];
  const finish = (): void => {
    if (line.length > 0) lines.push(line);
    line = [];
  };
  rows.forEach((row, y) => {
    const y0 = yg.edges[y] ?? 0;
    const y1 = yg.edges[y + 1] ?? y0;
    const x = row?.x === null || row === null ? null : valuePixel(xAxis, xg, row.x);
    if (row !== null && (row.x !== null || row.lo !== null || row.hi !== null)) {
      const lo = row.lo === null ? 0 : (valuePixel(xAxis, xg, row.lo) ?? 0);
      const hi = row.hi === null ? width : (valuePixel(xAxis, xg, row.hi) ?? width);
      if (hi > lo) bands.push([lo, hi, y0, y1]);
    }
    if (x === null) {
      if (line.length > 0) line.push([line[line.length - 1]![0], y0]);
      finish();
      return;
    }
    if (line.length === 0) line.push([x, y0]);
    line.push([x, (y0 + y1) / 2]);
  });
  if (line.length > 0) line.push([line[line.length - 1]![0], yg.edges[yg.edges.length - 1] ?? 0]);
  finish();
  return { lines, bands };
}
