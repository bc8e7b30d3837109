import { describe, expect, it } from 'vitest';
import { valueAxis } from '../../coordinator/summarize/axis.js';
import { type CellGrid, cellValue } from '../../coordinator/summarize/cell-grid.js';
import { GroupSummary } from '../../coordinator/summarize/group-summary.js';
import { renderPhaseDiagram } from '../../coordinator/summarize/phase-diagram.js';

/** A grid where the success rate of the cell at x = i/10 is exactly i/10 (10 trials each). */
function rampGrid(nx: number, ny: number): CellGrid {
  const cells = [];
  for (let y = 0; y < ny; y++) {
    for (let x = 0; x < nx; x++) {
      const s = new GroupSummary();
      for (let t = 0; t < 10; t++) s.add({ success: t < x }, new Map());
      cells.push(cellValue(s, 10, x, y, { name: 'success', kind: 'boolean' }));
    }
  }
  return { facet: 0, nx, ny, cells };
}

function attr(tag: string, name: string): number {
  return Number(new RegExp(`\\s${name}="([^"]*)"`).exec(tag)?.[1]);
}

describe('renderPhaseDiagram', () => {
  const xs = Array.from({ length: 11 }, (_, i) => i / 10);
  const input = {
    id: 't',
    title: 'ramp',
    subtitle: [],
    grid: rampGrid(11, 4),
    xAxis: valueAxis('overlap', xs),
    yAxis: valueAxis('length', [0, 1, 2, 3]),
    xLabel: 'overlap (dimensionless)',
    yLabel: 'length (patterns)',
    valueLabel: 'success rate',
    isRate: true,
    domain: [0, 1] as const,
    border: 0.5,
    describeCell: () => '',
  };

  it('draws the 50% border of success = x at x = 0.5 within half a cell, read back from the SVG path', () => {
    const { svg } = renderPhaseDiagram(input);
    // Cell geometry from the cell rectangles themselves: cell i spans [x_i, x_i + width].
    const rects = [...svg.matchAll(/<rect class="cell [^>]*>/g)].map((m) => m[0]);
    const bottomRow = rects.filter((r) => attr(r, 'data-y') === 0);
    const cellW = attr(bottomRow[0] ?? '', 'width');
    const x0 = attr(bottomRow[0] ?? '', 'x');
    const d = /<path class="border-line" d="([^"]+)"/.exec(svg)?.[1] ?? '';
    const coords = [...d.matchAll(/[ML]([-\d.]+),([-\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])] as const);
    expect(coords.length).toBeGreaterThan(1);
    for (const [px] of coords) {
      // Pixel -> cell coordinate -> data: cell centres hold x = i / 10.
      const u = (px - x0) / cellW;
      const x = (u - 0.5) / 10;
      expect(Math.abs(x - 0.5)).toBeLessThanOrEqual(0.05);
    }
  });

  it('declares its size and gives every cell its numbers and a tooltip title', () => {
    const { svg, width, height } = renderPhaseDiagram(input);
    expect(svg).toMatch(new RegExp(`^<svg [^>]*width="${width}" height="${height}"`));
    const cells = [...svg.matchAll(/<rect class="cell [^>]*>(<title>[^<]*<\/title>)/g)];
    expect(cells.length).toBe(44);
    // The cell with 3 successes of 10: Wilson 0.108 to 0.603 (SciPy 1.17 binomtest(3, 10).proportion_ci(method='wilson')).
    const three = cells.find((m) => /data-x="3" data-y="0"/.test(m[0]))?.[0] ?? '';
    expect(three).toContain('data-n="10"');
    expect(three).toContain('data-successes="3"');
    expect(Number(/data-lo="([^"]+)"/.exec(three)?.[1]).toFixed(3)).toBe('0.108');
    expect(Number(/data-hi="([^"]+)"/.exec(three)?.[1]).toFixed(3)).toBe('0.603');
    expect(three).toContain('95% Wilson interval 0.108 to 0.603');
  });
});

describe('renderPhaseDiagram with a categorical axis', () => {
  it('lays out string values in the order given, one column each, with their names as tick labels', () => {
    const kinds = ['ring', 'chain', 'random'];
    const cells = kinds.map((_, x) => {
      const s = new GroupSummary();
      s.add({ success: x !== 1 }, new Map());
      return cellValue(s, 1, x, 0, { name: 'success', kind: 'boolean' });
    });
    const { svg } = renderPhaseDiagram({
      id: 'c',
      title: 'categorical',
      subtitle: [],
      grid: { facet: 0, nx: 3, ny: 1, cells },
      xAxis: valueAxis('topology', kinds),
      yAxis: null,
      xLabel: 'topology',
      yLabel: '',
      valueLabel: 'success rate',
      isRate: true,
      domain: [0, 1],
      border: 0.5,
      describeCell: (c) => `topology = ${kinds[c.x]}`,
    });
    const ticks = [...svg.matchAll(/<g class="x-axis"[\s\S]*?<\/g>/g)][0]?.[0] ?? '';
    expect([...ticks.matchAll(/<text [^>]*>([^<]*)<\/text>/g)].map((m) => m[1])).toEqual(kinds);
    const xs = [...svg.matchAll(/<rect class="cell [^>]*data-x="(\d)"/g)].map((m) => Number(m[1]));
    expect(xs).toEqual([0, 1, 2]);
    expect(svg).toContain('topology = chain');
  });
});
