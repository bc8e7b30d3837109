import { scaleLinear } from 'd3-scale';
import { schemeTableau10 } from 'd3-scale-chromatic';
import type { TracePanel } from '../../../shared/model.js';
import { escapeXml, FONT_FAMILY, px, textWidth } from '../svg-util.js';

export interface TracePlotInput {
  readonly title: string;
  readonly subtitle: readonly string[];
  readonly panels: readonly TracePanel[];
  /** Label of the vertical axis, e.g. "match". */
  readonly valueLabel: string;
}

const DASHES = ['', '6 3', '2 2', '8 3 2 3'];
const PLOT_W = 560;
const PLOT_H = 150;

/**
 * The time course of one trial: one panel per recall, one line per stored
 * pattern (colour, then dash pattern, tell them apart), the cue window
 * shaded, a shared time axis in ms and a legend per panel.
 */
export function renderTracePlot(input: TracePlotInput): { svg: string; width: number; height: number } {
  const labels = [...new Set(input.panels.flatMap((p) => p.seriesLabels))];
  const style = new Map(
    labels.map((l, i) => [
      l,
      { colour: schemeTableau10[i % 10] ?? '#333333', dash: DASHES[Math.floor(i / 10) % DASHES.length] ?? '' },
    ]),
  );
  const legendW = Math.max(90, ...labels.map((l) => textWidth(l, 11) + 40));
  const left = 64;
  const top = 44 + 18 * (1 + input.subtitle.length);
  const gap = 64;
  const width = Math.round(left + PLOT_W + 24 + legendW);
  const panelH = Math.max(PLOT_H, labels.length * 15 + 10);
  const height = top + input.panels.length * (panelH + gap) - gap + 48;
  const out: string[] = [];
  out.push(
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="${FONT_FAMILY}" font-size="12" class="trace-plot">`,
  );
  out.push(`<title>${escapeXml(input.title)}</title>`);
  out.push(`<rect width="${width}" height="${height}" fill="#ffffff"/>`);
  out.push(`<text x="${left}" y="24" font-size="15" font-weight="bold">${escapeXml(input.title)}</text>`);
  input.subtitle.forEach((line, i) => {
    out.push(`<text x="${left}" y="${24 + 18 * (i + 1)}" fill="#333333">${escapeXml(line)}</text>`);
  });

  input.panels.forEach((panel, k) => {
    const y0 = top + k * (panelH + gap);
    const duration = Math.max(panel.stepMs, panel.steps * panel.stepMs);
    const xs = scaleLinear()
      .domain([0, duration])
      .range([left, left + PLOT_W]);
    let vmax = 1;
    let vmin = 0;
    for (const v of panel.values) {
      if (Number.isFinite(v)) {
        if (v > vmax) vmax = v;
        if (v < vmin) vmin = v;
      }
    }
    // A little headroom so a line at match 1 is not hidden by the frame.
    const ys = scaleLinear()
      .domain([vmin, vmax + 0.04 * (vmax - vmin)])
      .range([y0 + panelH, y0]);
    const clipId = `trace-clip-${k}`;
    out.push(
      `<g class="trace-panel" data-title="${escapeXml(panel.title)}" data-series="${panel.seriesLabels.length}">`,
    );
    out.push(`<clipPath id="${clipId}"><rect x="${left}" y="${y0}" width="${PLOT_W}" height="${panelH}"/></clipPath>`);
    out.push(`<text x="${left}" y="${y0 - 8}" font-weight="bold">${escapeXml(panel.title)}</text>`);
    const cueEnd = Math.min(duration, Math.max(0, panel.markEndMs));
    if (cueEnd > 0) {
      out.push(
        `<rect class="cue-window" x="${px(xs(0))}" y="${y0}" width="${px(xs(cueEnd) - xs(0))}" height="${panelH}" fill="#000000" fill-opacity="0.09" data-end-ms="${cueEnd}"/>`,
      );
      out.push(
        `<text x="${px(xs(cueEnd) - 4)}" y="${y0 + 14}" text-anchor="end" font-size="11" fill="#444444">cue</text>`,
      );
    }
    for (const t of ys.ticks(4)) {
      const y = ys(t);
      out.push(`<line x1="${left}" y1="${px(y)}" x2="${left + PLOT_W}" y2="${px(y)}" stroke="#e4e4e4"/>`);
      out.push(
        `<text x="${left - 6}" y="${px(y + 4)}" text-anchor="end" font-size="11">${escapeXml(String(Number(t.toPrecision(4))))}</text>`,
      );
    }
    const series = panel.seriesLabels.length;
    panel.seriesLabels.forEach((label, s) => {
      const parts: string[] = [];
      let pen = false;
      for (let r = 0; r < panel.steps; r++) {
        const v = panel.values[r * series + s];
        if (v === undefined || !Number.isFinite(v)) {
          pen = false;
          continue;
        }
        // Row r is the state at the end of step r.
        parts.push(`${pen ? 'L' : 'M'}${px(xs((r + 1) * panel.stepMs))},${px(ys(v))}`);
        pen = true;
      }
      const st = style.get(label) ?? { colour: '#333333', dash: '' };
      out.push(
        `<path class="series" data-label="${escapeXml(label)}" d="${parts.join('')}" fill="none" stroke="${st.colour}" stroke-width="1.6"${st.dash === '' ? '' : ` stroke-dasharray="${st.dash}"`} clip-path="url(#${clipId})"/>`,
      );
    });
    out.push(`<rect x="${left}" y="${y0}" width="${PLOT_W}" height="${panelH}" fill="none" stroke="#222222"/>`);
    for (const t of xs.ticks(8)) {
      const x = xs(t);
      out.push(`<line x1="${px(x)}" y1="${y0 + panelH}" x2="${px(x)}" y2="${y0 + panelH + 4}" stroke="#222222"/>`);
      out.push(
        `<text x="${px(x)}" y="${y0 + panelH + 16}" text-anchor="middle" font-size="11">${escapeXml(String(t))}</text>`,
      );
    }
    out.push(`<text x="${left + PLOT_W / 2}" y="${y0 + panelH + 32}" text-anchor="middle">time (ms)</text>`);
    const cy = y0 + panelH / 2;
    out.push(
      `<text x="16" y="${px(cy)}" text-anchor="middle" transform="rotate(-90 16 ${px(cy)})">${escapeXml(input.valueLabel)}</text>`,
    );
    // Legend for this panel.
    const lx = left + PLOT_W + 16;
    panel.seriesLabels.forEach((label, s) => {
      const st = style.get(label) ?? { colour: '#333333', dash: '' };
      const ly = y0 + 8 + s * 15;
      out.push(
        `<line x1="${lx}" y1="${ly}" x2="${lx + 22}" y2="${ly}" stroke="${st.colour}" stroke-width="2"${st.dash === '' ? '' : ` stroke-dasharray="${st.dash}"`}/>`,
      );
      out.push(`<text x="${lx + 28}" y="${ly + 4}" font-size="11">${escapeXml(label)}</text>`);
    });
    out.push('</g>');
  });
  out.push('</svg>');
  return { svg: out.join('\n'), width, height };
}
