import { scaleLinear } from 'd3-scale';
import type { TracePanel } from '../../../shared/model.js';
import { escapeXml, FONT_FAMILY, px, textWidth } from '../svg-util.js';
import { type TraceStyle, traceStyle } from './trace-palette.js';

export interface TracePlotInput {
  readonly title: string;
  readonly subtitle: readonly string[];
  readonly panels: readonly TracePanel[];
  /** Label of the vertical axis, e.g. "match". */
  readonly valueLabel: string;
}

const PLOT_W = 560;
const PLOT_H = 150;

interface SeriesLook {
  readonly label: string;
  readonly style: TraceStyle;
  /** Legend order: by sequence, then position. */
  readonly order: number;
}

/**
 * How each series of a panel is named and drawn. With the model's
 * `seriesMembers`: "seq 1 · pos 3" in the sequence's hue and the position's
 * shade, "seq 0 · pos 2 = seq 1 · pos 2 (shared)" dashed for a pattern
 * several sequences share. Without: the model's labels in the hues in turn.
 */
export function seriesLooks(panel: TracePanel): SeriesLook[] {
  const members = panel.seriesMembers;
  if (members === undefined || members.length !== panel.seriesLabels.length) {
    return panel.seriesLabels.map((label, i) => ({ label, style: traceStyle(i, 0, 1, false), order: i }));
  }
  const length = 1 + Math.max(0, ...members.flatMap((m) => m.map((x) => x.position)));
  return members.map((m, i) => {
    const first = m[0];
    if (first === undefined)
      return { label: panel.seriesLabels[i] ?? `p${i}`, style: traceStyle(i, 0, 1, false), order: 1e9 + i };
    const shared = m.length > 1;
    const label = `${m.map((x) => `seq ${x.sequence} · pos ${x.position}`).join(' = ')}${shared ? ' (shared)' : ''}`;
    return {
      label,
      style: traceStyle(first.sequence, first.position, length, shared),
      order: first.sequence * 10_000 + first.position,
    };
  });
}

/**
 * The time course of one trial: one panel per recall, one line per stored
 * pattern (a hue per sequence, shades along its positions, shared patterns
 * dashed), the cue window shaded, a shared time axis in ms and a legend per
 * panel ordered by sequence and position.
 */
export function renderTracePlot(input: TracePlotInput): { svg: string; width: number; height: number } {
  const looks = input.panels.map(seriesLooks);
  const labels = looks.flatMap((l) => l.map((x) => x.label));
  const legendW = Math.max(90, ...labels.map((l) => textWidth(l, 11) + 40));
  const seriesCount = Math.max(0, ...input.panels.map((p) => p.seriesLabels.length));
  const left = 64;
  const top = 44 + 18 * (1 + input.subtitle.length);
  const gap = 64;
  const width = Math.round(left + PLOT_W + 24 + legendW);
  const panelH = Math.max(PLOT_H, seriesCount * 15 + 10);
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
    const look = looks[k] ?? [];
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
      const st = look[s]?.style ?? { colour: '#333333', dash: '' };
      out.push(
        `<path class="series" data-label="${escapeXml(look[s]?.label ?? label)}" d="${parts.join('')}" fill="none" stroke="${st.colour}" stroke-width="1.6"${st.dash === '' ? '' : ` stroke-dasharray="${st.dash}"`} clip-path="url(#${clipId})"/>`,
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
    // Legend for this panel, by sequence and position.
    const lx = left + PLOT_W + 16;
    [...look]
      .sort((a, b) => a.order - b.order)
      .forEach(({ label, style: st }, s) => {
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
