import { describe, expect, it } from 'vitest';
import { binAxis, geometricList, locate, valueAxis } from '../../coordinator/summarize/axis.js';
import { axisGeometry } from '../../coordinator/summarize/axis-geometry.js';
import type { CellData } from '../../coordinator/summarize/cell-grid.js';
import { renderPhaseDiagram } from '../../coordinator/summarize/phase-diagram.js';
import { buildCellLayout } from '../../coordinator/summarize/report-layout.js';
import type { Range } from '../../shared/sweep/ranges.js';

// Expected positions below are worked by hand from the rule "a cell reaches
// halfway to each neighbour, the outer cells as far out as in" (common
// practice for drawing uneven grids, no source).

describe('cells of a grid axis', () => {
  it('are equal for evenly spaced values, exactly as one cell per value', () => {
    const g = axisGeometry(valueAxis('p', [0, 0.1, 0.2, 0.30000000000000004, 0.4]), 200);
    expect(g.even).toBe(true);
    expect(g.edges).toEqual([0, 40, 80, 120, 160, 200]);
    expect(g.centres).toEqual([20, 60, 100, 140, 180]);
  });

  it('reach halfway to each neighbour when the values are uneven, as a refined grid is', () => {
    // Values 0, 0.2, 0.3, 0.4, 0.6: the span runs from -0.1 to 0.7, so 100 px are 0.8 units.
    const g = axisGeometry(valueAxis('p', [0, 0.2, 0.3, 0.4, 0.6]), 100);
    expect(g.even).toBe(false);
    const expected = [0, 25, 43.75, 56.25, 75, 100];
    g.edges.forEach((e, i) => {
      expect(e).toBeCloseTo(expected[i] as number, 9);
    });
    [12.5, 37.5, 50, 62.5, 87.5].forEach((c, i) => {
      expect(g.centres[i]).toBeCloseTo(c, 9);
    });
    // Between cell centres a position in cell units maps linearly between the values.
    expect(g.at(1.5)).toBeCloseTo(37.5, 9);
    expect(g.at(2)).toBeCloseTo(43.75, 9);
    expect(g.at(0)).toBeCloseTo(0, 9);
    expect(g.at(5)).toBeCloseTo(100, 9);
  });

  it('meet at geometric means on a log axis', () => {
    // 1, 2, 5, 10 in log space: the outer edges are 1/sqrt(2) and 10 sqrt(2), a span of ln 20,
    // and the edge between 1 and 2 lies at sqrt(2), i.e. ln 2 / ln 20 of the length from the start.
    const g = axisGeometry(valueAxis('p', [1, 2, 5, 10], true), 100);
    expect(g.edges[1]).toBeCloseTo((100 * Math.log(2)) / Math.log(20), 9);
    expect(g.edges[2]).toBeCloseTo((100 * Math.log(Math.SQRT2 * Math.sqrt(10))) / Math.log(20), 9);
    expect(g.centres[0]).toBeCloseTo((100 * Math.log(Math.SQRT2)) / Math.log(20), 9);
  });

  it('are equal for strings, and for fewer than three numbers', () => {
    expect(axisGeometry(valueAxis('k', ['ring', 'chain', 'star']), 90).edges).toEqual([0, 30, 60, 90]);
    expect(axisGeometry(valueAxis('p', [1, 100]), 90).even).toBe(true);
  });
});

describe('log axes chosen without being asked', () => {
  it('are chosen for lists spaced by ratio and not for lists spaced by difference', () => {
    expect(geometricList([6, 10, 16, 25, 40])).toBe(true);
    expect(geometricList([1, 2, 5, 10, 20, 50, 100])).toBe(true);
    expect(geometricList([10, 16, 25, 40, 63, 100])).toBe(true);
    expect(geometricList([0, 0.25, 0.5, 0.75, 1])).toBe(false);
    expect(geometricList([1, 2, 3, 4])).toBe(false);
    expect(geometricList([25, 50])).toBe(false);
  });

  it('are chosen for a stepped range with scale log and a list spaced by ratio, and on request', () => {
    const vary: Record<string, Range> = {
      tauZPre: { from: 10, to: 1000, steps: 3, scale: 'log' } as Range,
      minicolumns: { list: [10, 20, 40, 80] } as Range,
      patternOverlap: { list: [0.1, 0.2, 0.3] } as Range,
    };
    const layout = buildCellLayout({
      vary,
      x: 'tauZPre',
      y: 'minicolumns',
      facet: 'patternOverlap',
      bins: 8,
      facetBins: 4,
    });
    expect(layout.xAxis?.log).toBe(true);
    expect(layout.yAxis?.log).toBe(true);
    expect(layout.facetAxis?.log).toBe(false);
    const asked = buildCellLayout({
      vary,
      x: 'patternOverlap',
      y: null,
      facet: null,
      bins: 8,
      facetBins: 4,
      log: new Set(['patternOverlap']),
    });
    expect(asked.xAxis?.log).toBe(true);
  });
});

describe('bins of a whole-number range', () => {
  it('have whole-number edges, and every value falls in the bin its edges say', () => {
    // [10, 100] in 8 equal bins has edges 10, 21.25, 32.5, ...; rounded half up: 21, 33, 44, 55, 66, 78, 89.
    const axis = binAxis('minicolumns', 10, 100, 8, false, true);
    expect(axis.kind === 'bins' && axis.edges).toEqual([10, 21, 33, 44, 55, 66, 78, 89, 100]);
    for (let v = 10; v <= 100; v++) {
      const i = locate(axis, v);
      const lo = axis.edges[i] as number;
      const hi = axis.edges[i + 1] as number;
      expect(v >= lo && (v < hi || (v === 100 && i === 7))).toBe(true);
    }
  });

  it('merge bins that rounding leaves empty', () => {
    // Three whole numbers cannot fill eight bins: 1, 2 and 3 give edges 1, 2, 3.
    const axis = binAxis('sequenceCount', 1, 3, 8, false, true);
    expect(axis.kind === 'bins' && axis.edges).toEqual([1, 2, 3]);
    expect([1, 2, 3].map((v) => locate(axis, v))).toEqual([0, 1, 1]);
  });
});

describe('a phase diagram of an uneven grid', () => {
  it('draws each cell at its own width and says when an axis is in log space', () => {
    const xs = [0, 0.2, 0.3, 0.4, 0.6];
    const xAxis = valueAxis('patternOverlap', xs);
    const yAxis = valueAxis('minicolumns', [10, 20, 40], true);
    const cells: CellData[] = [];
    for (let y = 0; y < 3; y++)
      for (let x = 0; x < xs.length; x++)
        cells.push({
          x,
          y,
          n: 4,
          planned: 4,
          successes: x < 2 ? 4 : 0,
          hits: x < 2 ? 4 : 0,
          metricCount: 4,
          value: x < 2 ? 1 : 0,
          lo: x < 2 ? 0.51 : 0,
          hi: x < 2 ? 1 : 0.49,
          sd: null,
          successKey: null,
          failureKey: null,
        });
    const { svg } = renderPhaseDiagram({
      id: 'd',
      title: 't',
      subtitle: [],
      grid: { facet: 0, nx: xs.length, ny: 3, cells },
      xAxis,
      yAxis,
      xLabel: 'patternOverlap',
      yLabel: 'minicolumns',
      valueLabel: 'success rate',
      isRate: true,
      domain: [0, 1],
      border: 0.5,
      describeCell: (c) => `cell ${c.x},${c.y}`,
    });
    const widths = [...svg.matchAll(/class="cell [^"]*" x="[^"]*" y="[^"]*" width="([^"]+)"/g)]
      .slice(0, xs.length)
      .map((m) => Number(m[1]));
    // The plot is 5 cells of 64 px = 320 px; the gaps 0.2, 0.1, 0.1, 0.2 give widths in the ratio 2 : 1.5 : 1 : 1.5 : 2.
    const unit = 320 / 8;
    [2, 1.5, 1, 1.5, 2].forEach((r, i) => {
      expect(widths[i]).toBeCloseTo(r * unit, 1);
    });
    expect(svg).toContain('minicolumns, log scale');
    expect(svg).not.toContain('patternOverlap, log scale');
  });
});
