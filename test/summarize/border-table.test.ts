import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../coordinator/summarize/build-report.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

function parseCsv(text: string): Array<Record<string, string>> {
  const [head, ...lines] = text.trimEnd().split('\n');
  const names = (head ?? '').split(',');
  return lines.map((line) => Object.fromEntries(line.split(',').map((v, i) => [names[i], v])));
}

describe('the border table of a grid sweep', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(BURN_SWEEP);
    await buildReport({ dir: folder.dir, formats: ['csv', 'html'] });
  });
  afterAll(async () => folder.cleanup());

  it('gives each row the crossing of 50% interpolated between the rates of points.csv that bracket it', async () => {
    const points = parseCsv(await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8'));
    const border = parseCsv(await readFile(join(folder.dir, 'report', 'border.csv'), 'utf8'));
    expect(border.map((r) => r.burnMs)).toEqual(['0', '1']);
    for (const row of border) {
      // The definition, worked independently of the code: the first neighbours (by successRate)
      // on different sides of 0.5, and the straight line between their rates (common practice, no source).
      const line = points
        .filter((p) => p.burnMs === row.burnMs)
        .map((p) => ({ x: Number(p.successRate), rate: Number(p.success_rate) }))
        .sort((a, b) => a.x - b.x);
      let expected: number | null = null;
      for (let i = 0; i + 1 < line.length && expected === null; i++) {
        const a = line[i]!;
        const b = line[i + 1]!;
        if (a.rate === 0.5) expected = a.x;
        else if ((a.rate - 0.5) * (b.rate - 0.5) < 0)
          expected = a.x + ((a.rate - 0.5) / (a.rate - b.rate)) * (b.x - a.x);
      }
      expect(expected).not.toBeNull();
      expect(Number(row.successRate_border)).toBeCloseTo(expected as number, 12);
      expect(Number(row.successRate_lo)).toBeLessThanOrEqual(Number(row.successRate_border));
      expect(Number(row.successRate_hi)).toBeGreaterThanOrEqual(Number(row.successRate_border));
      expect(Number(row.points)).toBe(11);
      expect(Number(row.trials)).toBe(44);
    }
  });

  it('is on the page with its file linked', async () => {
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    expect(html).toContain('<h2 id="border">Border by row</h2>');
    expect(html).toContain('<a href="border.csv">border.csv</a>');
  });
});
