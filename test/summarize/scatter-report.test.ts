import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../coordinator/summarize/build-report.js';
import { makeSweepFolder, type SweepFolder } from './sweep-folder.js';

/**
 * cpu-burn succeeds with probability successRate, whatever burnMs is: the
 * true 50% border is the vertical line successRate = 0.5 (the model's
 * definition in test/fixtures/models/cpu-burn/cpu-burn.mjs).
 */
const SWEEP = `
name: burn-scatter
model: cpu-burn
seed: 4
replicates: 3
vary:
  successRate: { between: [0, 1] }
  burnMs: { between: [0, 2], integer: true }
sampler: { kind: lhs, points: 90 }
report: { x: successRate, y: burnMs }
`;

function attr(tag: string, name: string): number {
  return Number(new RegExp(`\\s${name}="([^"]*)"`).exec(tag)?.[1]);
}

describe('the report of a sampled sweep', () => {
  let folder: SweepFolder;
  let html = '';
  beforeAll(async () => {
    folder = await makeSweepFolder(SWEEP);
    await buildReport({ dir: folder.dir, formats: ['svg', 'html'] });
    html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
  });
  afterAll(async () => folder.cleanup());

  it('draws every sampled point as a marker over a smooth field, with the 50% contour near the true border', async () => {
    const svg = await readFile(join(folder.dir, 'report', 'phase-success.svg'), 'utf8');
    const root = /<svg [^>]*>/.exec(svg)?.[0] ?? '';
    expect(root).toContain('scatter-diagram');
    const markers = [...svg.matchAll(/<circle class="point" [^>]*>/g)].map((m) => m[0]);
    expect(markers.length).toBe(90);
    for (const m of markers) expect(attr(m, 'data-n')).toBe(3);
    expect(svg).toMatch(/<g class="field" data-nx="40" data-ny="40"/);
    const left = attr(root, 'data-plot-left');
    const width = attr(root, 'data-plot-width');
    const d = /<path class="border-line" d="([^"]+)"/.exec(svg)?.[1] ?? '';
    const xs = [...d.matchAll(/[ML]([-\d.]+),([-\d.]+)/g)].map((m) => (Number(m[1]) - left) / width);
    expect(xs.length).toBeGreaterThan(2);
    // 90 points x 3 trials: the estimate's border lies within 0.2 of successRate = 0.5 (tolerance chosen by hand).
    for (const x of xs) expect(Math.abs(x - 0.5)).toBeLessThan(0.2);
    expect(svg).toContain('class="border-band"');
    // Only what the panel draws is in its legend.
    const legend = [...svg.matchAll(/data-mark="([a-z]+)"/g)].map((m) => m[1]);
    expect(legend).toEqual(['marker', 'border', 'band']);
  });

  it('says in the caption how the field was estimated and what it pools', () => {
    const caption = /<figcaption>([^<]*)/.exec(html)?.[1] ?? '';
    expect(caption).toContain('Markers: the 90 sampled points');
    expect(caption).toContain('local logistic regression');
    expect(caption).toContain('leave-one-out likelihood');
  });
});

describe('the report of a sampled sweep split into facets', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(`
name: bcpnn-facets
model: bcpnn-sequences
seed: 8
replicates: 1
fixed: { hypercolumns: 6, minicolumns: 12, sequenceLength: 4, epochs: 2, recallDuration: 300 }
vary:
  patternOverlap: { between: [0, 1] }
  tauZPre: { between: [20, 200], scale: log }
  adaptGain: { between: [0.5, 4] }
  overlapLength: { among: [1, 2] }
sampler: { kind: sobol, points: 64 }
report: { x: patternOverlap, y: tauZPre, facet: adaptGain }
`);
  });
  afterAll(async () => folder.cleanup());

  it('cuts a continuous facet only into panels of at least 20 points', async () => {
    await buildReport({ dir: folder.dir, formats: ['html'] });
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    const figures = [...html.matchAll(/<figure [^>]*data-points="(\d+)"/g)].map((m) => Number(m[1]));
    // 64 Sobol points: at most floor(64 / 20) = 3 panels, each with at least 20 (worked by hand).
    expect(figures.length).toBeGreaterThanOrEqual(2);
    expect(figures.length).toBeLessThanOrEqual(3);
    for (const n of figures) expect(n).toBeGreaterThanOrEqual(20);
    expect(figures.reduce((s, n) => s + n, 0)).toBe(64);
  });

  it('replaces a discrete facet value with too few points by words, and draws the others', async () => {
    await buildReport({
      dir: folder.dir,
      formats: ['html'],
      facet: 'overlapLength',
      x: 'patternOverlap',
      y: 'adaptGain',
    });
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    const panels = [...html.matchAll(/<figure [^>]*data-points="(\d+)"([^>]*)>/g)];
    expect(panels.length).toBe(2);
    expect(panels.reduce((s, p) => s + Number(p[1]), 0)).toBe(64);
    for (const p of panels) expect((p[2] ?? '').includes('data-skipped="too-few-points"')).toBe(Number(p[1]) < 20);
  });

  it('pools a continuous facet that cannot give two panels of 20 points, and says so', async () => {
    const small = await makeSweepFolder(`
name: bcpnn-few
model: bcpnn-sequences
seed: 8
replicates: 1
fixed: { hypercolumns: 6, minicolumns: 12, sequenceLength: 4, epochs: 2, recallDuration: 300 }
vary:
  patternOverlap: { between: [0, 1] }
  tauZPre: { between: [20, 200], scale: log }
  adaptGain: { between: [0.5, 4] }
sampler: { kind: lhs, points: 30 }
`);
    try {
      await buildReport({ dir: small.dir, formats: ['html'] });
      const html = await readFile(join(small.dir, 'report', 'index.html'), 'utf8');
      const panels = [...html.matchAll(/<figure [^>]*data-points="(\d+)"/g)];
      expect(panels.map((p) => Number(p[1]))).toEqual([30]);
      expect(html).toContain(
        'adaptGain is pooled, not split into panels: 30 sampled points cannot give two panels of at least 20.',
      );
    } finally {
      await small.cleanup();
    }
  });
});
