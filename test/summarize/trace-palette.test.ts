import { describe, expect, it } from 'vitest';
import { SEQUENCE_HUES, SHARED_DASH, traceStyle } from '../../coordinator/summarize/charts/trace-palette.js';
import { seriesLooks } from '../../coordinator/summarize/charts/trace-plot.js';

/*
 * Colour-vision simulation: the matrices of Machado, Oliveira & Fernandes
 * (2009, IEEE TVCG 15(6):1291-1298), severity 1.0, applied to linear sRGB
 * (from memory). Colour difference: CIE76 ΔE in CIELAB under D65, with the
 * sRGB and CIELAB formulas of IEC 61966-2-1 and CIE 15 (from memory). This
 * code is written here, apart from the palette's own.
 */
const PROTAN = [
  [0.152286, 1.052583, -0.204868],
  [0.114503, 0.786281, 0.099216],
  [-0.003882, -0.048116, 1.051998],
];
const DEUTAN = [
  [0.367322, 0.860646, -0.227968],
  [0.280085, 0.672501, 0.047413],
  [-0.01182, 0.04294, 0.968881],
];
const TRITAN = [
  [1.255528, -0.076749, -0.178779],
  [-0.078411, 0.930809, 0.147602],
  [0.004733, 0.691367, 0.3039],
];
const IDENTITY = [
  [1, 0, 0],
  [0, 1, 0],
  [0, 0, 1],
];

function linear(hex: string): number[] {
  return [1, 3, 5].map((i) => {
    const c = Number.parseInt(hex.slice(i, i + 2), 16) / 255;
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  });
}

function lab(rgb: readonly number[]): number[] {
  const [r = 0, g = 0, b = 0] = rgb.map((v) => Math.min(1, Math.max(0, v)));
  const xyz = [
    (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047,
    0.2126 * r + 0.7152 * g + 0.0722 * b,
    (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883,
  ];
  const f = xyz.map((t) => (t > (6 / 29) ** 3 ? Math.cbrt(t) : t / (3 * (6 / 29) ** 2) + 4 / 29));
  const [fx = 0, fy = 0, fz = 0] = f;
  return [116 * fy - 16, 500 * (fx - fy), 200 * (fy - fz)];
}

function seen(hex: string, m: number[][]): number[] {
  const c = linear(hex);
  return lab(m.map((row) => row.reduce((s, v, i) => s + v * (c[i] ?? 0), 0)));
}

function deltaE(a: string, b: string, m: number[][]): number {
  const p = seen(a, m);
  const q = seen(b, m);
  return Math.hypot((p[0] ?? 0) - (q[0] ?? 0), (p[1] ?? 0) - (q[1] ?? 0), (p[2] ?? 0) - (q[2] ?? 0));
}

describe('the trace palette', () => {
  const visions: Array<[string, number[][], number]> = [
    ['normal vision', IDENTITY, 20],
    ['protanopia', PROTAN, 20],
    ['deuteranopia', DEUTAN, 20],
    ['tritanopia', TRITAN, 15],
  ];
  for (const [name, matrix, least] of visions) {
    it(`keeps every pair of sequence hues at least ΔE ${least} apart for ${name}`, () => {
      for (let i = 0; i < SEQUENCE_HUES.length; i++) {
        for (let j = i + 1; j < SEQUENCE_HUES.length; j++) {
          const a = SEQUENCE_HUES[i] ?? '';
          const b = SEQUENCE_HUES[j] ?? '';
          expect(deltaE(a, b, matrix), `${a} vs ${b}`).toBeGreaterThanOrEqual(least);
        }
      }
    });
  }

  it('gives neighbouring positions of one sequence shades at least ΔE 5 apart, darkest at the cue', () => {
    for (let s = 0; s < SEQUENCE_HUES.length; s++) {
      const shades = Array.from({ length: 6 }, (_, q) => traceStyle(s, q, 6, false).colour);
      for (let q = 1; q < shades.length; q++) {
        expect(deltaE(shades[q - 1] ?? '', shades[q] ?? '', IDENTITY)).toBeGreaterThanOrEqual(5);
        // Lightness rises along the sequence.
        expect(seen(shades[q] ?? '', IDENTITY)[0] ?? 0).toBeGreaterThan(seen(shades[q - 1] ?? '', IDENTITY)[0] ?? 0);
      }
    }
  });

  it('names lines by sequence and position, marks shared patterns, and orders the legend by sequence', () => {
    const looks = seriesLooks({
      title: 'recall 0',
      stepMs: 1,
      steps: 1,
      seriesLabels: ['p0', 'p1', 'p2', 'p3'],
      // Two sequences of 3; position 1 is one shared pattern (p1).
      seriesMembers: [
        [{ sequence: 0, position: 0 }],
        [
          { sequence: 0, position: 1 },
          { sequence: 1, position: 1 },
        ],
        [{ sequence: 1, position: 0 }],
        [{ sequence: 0, position: 2 }],
      ],
      markEndMs: 0,
      values: new Float64Array(4),
    });
    expect(looks.map((l) => l.label)).toEqual([
      'seq 0 · pos 0',
      'seq 0 · pos 1 = seq 1 · pos 1 (shared)',
      'seq 1 · pos 0',
      'seq 0 · pos 2',
    ]);
    expect(looks[1]?.style.dash).toBe(SHARED_DASH);
    expect(looks[0]?.style.dash).toBe('');
    expect([...looks].sort((a, b) => a.order - b.order).map((l) => l.label)[3]).toBe('seq 1 · pos 0');
    // Hue by sequence: sequence 1's cue line is drawn in its own hue family, not sequence 0's.
    expect(looks[2]?.style.colour).toBe(traceStyle(1, 0, 3, false).colour);
    expect(looks[2]?.style.colour).not.toBe(looks[0]?.style.colour);
  });
});
