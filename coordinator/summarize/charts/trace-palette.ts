/**
 * Line colours of recall traces: one hue per stored sequence, a lighter
 * shade for each later position, so a legend entry "seq 1 · pos 3" is found
 * by hue, then by shade.
 *
 * The four hues are this project's own: a mid blue, an amber, a graphite
 * and an orchid, chosen so that every pair stays apart (CIE76 ΔE of at least
 * 20) for normal vision and under simulated protanopia and deuteranopia,
 * and at least 15 under tritanopia; test/summarize/trace-palette.test.ts
 * checks it with the matrices of Machado, Oliveira & Fernandes (2009).
 * A fifth and later sequence reuses the hues with a dash pattern.
 */
export const SEQUENCE_HUES: readonly string[] = ['#2f6db5', '#d9822b', '#444444', '#d977b0'];

/** Dash patterns per round of hues: solid for the first four sequences, then dashed, then dotted. */
const ROUND_DASHES = ['', '7 3', '2 2'];

/** Shared patterns are drawn with this dash, so they stand out in every hue. */
export const SHARED_DASH = '5 2 1.5 2';

function channel(hex: string, i: number): number {
  return Number.parseInt(hex.slice(1 + 2 * i, 3 + 2 * i), 16);
}

function mix(hex: string, towards: number, t: number): string {
  const parts = [0, 1, 2].map((i) => Math.round(channel(hex, i) + (towards - channel(hex, i)) * t));
  return `#${parts.map((v) => v.toString(16).padStart(2, '0')).join('')}`;
}

export interface TraceStyle {
  readonly colour: string;
  readonly dash: string;
}

/**
 * The style of the line of the pattern at `position` (of `length`) in
 * `sequence`: the sequence's hue, darkened a little at the cue and lightened
 * towards the last position.
 */
export function traceStyle(sequence: number, position: number, length: number, shared: boolean): TraceStyle {
  const hue = SEQUENCE_HUES[sequence % SEQUENCE_HUES.length] ?? '#444444';
  const t = length <= 1 ? 0 : position / (length - 1);
  // One ramp from 30% towards black at the cue to 55% towards white at the end (gamma-encoded sRGB, monotone in lightness).
  const shift = -0.3 + 0.85 * t;
  const colour = shift < 0 ? mix(hue, 0, -shift) : mix(hue, 255, shift);
  const round = Math.floor(sequence / SEQUENCE_HUES.length) % ROUND_DASHES.length;
  return { colour, dash: shared ? SHARED_DASH : (ROUND_DASHES[round] ?? '') };
}
