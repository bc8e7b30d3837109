import type { ColourScale } from './colour-scale.js';
import type { CellPoint } from './contour.js';
import { escapeXml, px } from './svg-util.js';

/** Pieces every phase diagram shares: marks, their legend, the colour bar. */

export const TICK_FONT = 11;
export const LEGEND_WIDTH = 215;
/** Vertical space of one legend mark. */
export const MARK_STEP = 24;

/** A mark the legend explains; a panel lists only the marks it draws. */
export type LegendMark =
  | { readonly kind: 'border'; readonly text: string }
  | { readonly kind: 'band'; readonly text: string }
  | { readonly kind: 'incomplete' }
  | { readonly kind: 'empty'; readonly text: string }
  | { readonly kind: 'marker'; readonly text: string };

/** Two-tone diagonal hatching that stays visible on the dark and the light end of the colour scale. */
export function hatchDef(id: string): string {
  return `<pattern id="${id}-hatch" patternUnits="userSpaceOnUse" width="7" height="7" patternTransform="rotate(45)"><rect width="7" height="7" fill="none"/><line x1="1" y1="0" x2="1" y2="7" stroke="#ffffff" stroke-width="1.6" stroke-opacity="0.85"/><line x1="2.6" y1="0" x2="2.6" y2="7" stroke="#000000" stroke-width="1.2" stroke-opacity="0.7"/></pattern>`;
}

/** Path data of polylines or rings given in some coordinates, mapped to pixels by `at`. */
export function pathData(
  lines: readonly (readonly CellPoint[])[],
  at: (p: CellPoint) => [number, number],
  close = false,
): string {
  return lines
    .map((line) => {
      const d = line.map((p, i) => {
        const [x, y] = at(p);
        return `${i === 0 ? 'M' : 'L'}${px(x)},${px(y)}`;
      });
      return d.join('') + (close ? 'Z' : '');
    })
    .join('');
}

/** The border: a white casing under a black line, visible on every colour of the scale. */
export function borderPaths(d: string, level: number): string[] {
  return [
    `<path d="${d}" fill="none" stroke="#ffffff" stroke-width="5" stroke-linejoin="round" stroke-linecap="round"/>`,
    `<path class="border-line" d="${d}" fill="none" stroke="#000000" stroke-width="2.2" stroke-linejoin="round" stroke-linecap="round" data-level="${level}"/>`,
  ];
}

const BAND_FILL = 'fill="#ffffff" fill-opacity="0.42"';
const BAND_EDGE = 'stroke="#000000" stroke-width="1.1" stroke-dasharray="4 3" stroke-opacity="0.8"';

/** The band where the 95% interval holds the border level: a light wash with a dashed edge. */
export function bandPaths(d: string): string[] {
  return [
    `<path class="border-band" d="${d}" ${BAND_FILL} fill-rule="evenodd" stroke="none"/>`,
    `<path class="border-band-edge" d="${d}" fill="none" ${BAND_EDGE} fill-rule="evenodd"/>`,
  ];
}

/** A marker for one sampled point: its colour ringed in black over a white halo. */
export function markerCircle(x: number, y: number, fill: string, attrs: string): string {
  return `<circle ${attrs} cx="${px(x)}" cy="${px(y)}" r="4.6" fill="${fill}" stroke="#000000" stroke-width="1.1"/>`;
}

/**
 * The legend: the value's name, a colour bar with round ticks, then one line
 * per mark the panel draws. Returns its SVG and the y below its last line.
 */
export function legend(input: {
  readonly id: string;
  readonly x: number;
  readonly top: number;
  readonly barHeight: number;
  readonly title: string;
  readonly scale: ColourScale;
  readonly marks: readonly LegendMark[];
}): { svg: string[]; bottom: number } {
  const { id, x, top, barHeight, scale } = input;
  const out: string[] = [];
  out.push('<g class="legend">');
  out.push(`<text x="${x}" y="${top - 8}" font-weight="bold">${escapeXml(input.title)}</text>`);
  const stops = Array.from({ length: 11 }, (_, i) => {
    const t = i / 10;
    const v = scale.domain[0] + t * (scale.domain[1] - scale.domain[0]);
    return `<stop offset="${t}" stop-color="${scale.colour(v)}"/>`;
  }).join('');
  out.push(`<defs><linearGradient id="${id}-ramp" x1="0" y1="1" x2="0" y2="0">${stops}</linearGradient></defs>`);
  out.push(
    `<rect x="${x}" y="${top}" width="18" height="${barHeight}" fill="url(#${id}-ramp)" stroke="#222222" stroke-width="0.8"/>`,
  );
  const [d0, d1] = scale.domain;
  for (const t of scale.ticks(5)) {
    const y = top + barHeight - ((t - d0) / (d1 - d0)) * barHeight;
    out.push(`<line x1="${x + 18}" y1="${px(y)}" x2="${x + 23}" y2="${px(y)}" stroke="#222222"/>`);
    out.push(
      `<text x="${x + 27}" y="${px(y + 4)}" font-size="${TICK_FONT}">${escapeXml(String(Number(t.toPrecision(6))))}</text>`,
    );
  }
  let ly = top + barHeight + 26;
  const label = (text: string): string =>
    `<text x="${x + 30}" y="${ly + 4}" font-size="${TICK_FONT + 1}">${escapeXml(text)}</text>`;
  for (const mark of input.marks) {
    out.push(`<g class="legend-mark" data-mark="${mark.kind}">`);
    switch (mark.kind) {
      case 'border':
        out.push(`<line x1="${x}" y1="${ly}" x2="${x + 22}" y2="${ly}" stroke="#ffffff" stroke-width="5"/>`);
        out.push(`<line x1="${x}" y1="${ly}" x2="${x + 22}" y2="${ly}" stroke="#000000" stroke-width="2.2"/>`);
        out.push(label(mark.text));
        break;
      case 'band':
        out.push(`<rect x="${x}" y="${ly - 8}" width="22" height="16" fill="${scale.colour((d0 + d1) / 2)}"/>`);
        out.push(`<rect x="${x}" y="${ly - 8}" width="22" height="16" ${BAND_FILL} ${BAND_EDGE}/>`);
        out.push(label(mark.text));
        break;
      case 'incomplete':
        out.push(`<rect x="${x}" y="${ly - 8}" width="22" height="16" fill="#7f7f7f"/>`);
        out.push(
          `<rect x="${x}" y="${ly - 8}" width="22" height="16" fill="url(#${id}-hatch)" stroke="#222222" stroke-width="0.6"/>`,
        );
        out.push(label('fewer trials than planned'));
        break;
      case 'empty':
        out.push(`<rect x="${x}" y="${ly - 8}" width="22" height="16" fill="#ffffff" stroke="#c8c8c8"/>`);
        out.push(label(mark.text));
        break;
      case 'marker':
        out.push(markerCircle(x + 11, ly, scale.colour(d1), 'class="legend-marker"'));
        out.push(label(mark.text));
        break;
    }
    out.push('</g>');
    ly += MARK_STEP;
  }
  out.push('</g>');
  return { svg: out, bottom: ly - MARK_STEP + 12 };
}
