import { appendFile, readdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../coordinator/summarize/build-report.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { decodePng } from './png-decode.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

/** Records of a folder's result shards, read directly (not through the code under test). */
async function readShardRecords(
  dir: string,
): Promise<Array<{ key: string; point: Record<string, number>; metrics: Record<string, unknown> }>> {
  const folder = join(dir, 'results');
  const out = [];
  for (const name of (await readdir(folder)).sort()) {
    for (const line of (await readFile(join(folder, name), 'utf8')).split('\n')) {
      if (line.trim() === '') continue;
      try {
        out.push(JSON.parse(line));
      } catch {
        // a torn line, skipped like the store does
      }
    }
  }
  return out;
}

function parseCsv(text: string): { header: string[]; rows: string[][] } {
  const lines = text.trimEnd().split('\n');
  return { header: (lines[0] ?? '').split(','), rows: lines.slice(1).map((l) => l.split(',')) };
}

function attr(tag: string, name: string): string | undefined {
  return new RegExp(`\\s${name}="([^"]*)"`).exec(tag)?.[1];
}

function cellTags(svg: string): string[] {
  return [...svg.matchAll(/<rect class="cell [^>]*>/g)].map((m) => m[0]);
}

describe('buildReport on a finished grid sweep', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(BURN_SWEEP);
    await buildReport({ dir: folder.dir });
  });
  afterAll(async () => folder.cleanup());

  it('writes a CSV with one row per point whose counts match the records', async () => {
    const { header, rows } = parseCsv(await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8'));
    expect(header.slice(0, 8)).toEqual([
      'successRate',
      'burnMs',
      'n',
      'planned',
      'successes',
      'success_rate',
      'success_lo',
      'success_hi',
    ]);
    expect(rows.length).toBe(22);
    const records = await readShardRecords(folder.dir);
    for (const row of rows) {
      const [rate, burn, n, planned, successes] = row.map(Number);
      const mine = records.filter((r) => r.point['successRate'] === rate && r.point['burnMs'] === burn);
      expect(n).toBe(mine.length);
      expect(planned).toBe(4);
      expect(successes).toBe(mine.filter((r) => r.metrics['success'] === true).length);
    }
  });

  it('draws one diagram with a cell per point, each carrying n and successes', async () => {
    const svg = await readFile(join(folder.dir, 'report', 'phase-success.svg'), 'utf8');
    const cells = cellTags(svg);
    expect(cells.length).toBe(22);
    for (const cell of cells) expect(attr(cell, 'data-n')).toBe('4');
    // A pure number (unit 1) is named alone; a unit is said.
    expect(svg).toMatch(/<text class="x-title"[^>]*>successRate<\/text>/);
    expect(svg).toContain('burnMs (ms)');
    expect(svg).not.toContain('class="cell empty');
    // Nothing is missing, so the legend explains neither hatching nor empty cells.
    expect(svg).not.toContain('fewer trials than planned');
    expect(svg).not.toContain('no trials yet');
  });

  it('renders a PNG at twice the size the SVG declares by default, with visible text', async () => {
    const svg = await readFile(join(folder.dir, 'report', 'phase-success.svg'), 'utf8');
    const png = decodePng(await readFile(join(folder.dir, 'report', 'phase-success.png')));
    const root = /<svg [^>]*>/.exec(svg)?.[0] ?? '';
    expect(png.width).toBe(2 * Number(attr(root, 'width')));
    expect(png.height).toBe(2 * Number(attr(root, 'height')));
    // The title is black text at y 10..28 (SVG units) from the plot's left edge: some pixels there must be dark.
    const left = 2 * Number(attr(root, 'data-plot-left'));
    let dark = 0;
    for (let y = 20; y < 56; y++) {
      for (let x = left; x < left + 400; x++) {
        const i = (y * png.width + x) * 4;
        if ((png.rgba[i] ?? 255) < 80 && (png.rgba[i + 1] ?? 255) < 80 && (png.rgba[i + 2] ?? 255) < 80) dark += 1;
      }
    }
    expect(dark).toBeGreaterThan(200);
  });

  it('renders the PNG at the scale asked for', async () => {
    await buildReport({ dir: folder.dir, formats: ['png', 'svg'], pngScale: 3 });
    const svg = await readFile(join(folder.dir, 'report', 'phase-success.svg'), 'utf8');
    const png = decodePng(await readFile(join(folder.dir, 'report', 'phase-success.png')));
    expect(png.width).toBe(3 * Number(attr(/<svg [^>]*>/.exec(svg)?.[0] ?? '', 'width')));
  });

  it('refuses a PNG scale out of range, naming the option', async () => {
    await expect(buildReport({ dir: folder.dir, pngScale: 9 })).rejects.toThrow(
      /--png-scale: must be a whole number from 1 to 8/,
    );
  });

  it('states the sweep in index.html and inlines the diagram', async () => {
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    expect(html).toContain(folder.sweep.hash);
    expect(html).toContain('88 of 88 (100.0% complete)');
    expect(html).toContain('test-sweep.yaml');
    expect(cellTags(html).length).toBe(22);
    // Self-contained: nothing is fetched from anywhere.
    expect(html).not.toMatch(/(src|href)="(https?:)?\/\//);
  });

  it('writes only the formats asked for', async () => {
    const result = await buildReport({ dir: folder.dir, formats: ['csv'] });
    expect(result.files.map((f) => f.split('/').pop())).toEqual(['points.csv', 'trials.csv', 'border.csv']);
    expect(result.indexHtml).toBeNull();
  });

  it('shows a numeric metric as means without a border line', async () => {
    const result = await buildReport({ dir: folder.dir, metric: 'draw', formats: ['svg'] });
    expect(result.files.map((f) => f.split('/').pop())).toEqual(['phase-draw.svg']);
    const svg = await readFile(join(folder.dir, 'report', 'phase-draw.svg'), 'utf8');
    expect(svg).toContain('mean draw');
    expect(svg).not.toContain('border-line');
  });

  it('refuses an unknown metric, naming the option and the metrics there are', async () => {
    await expect(buildReport({ dir: folder.dir, metric: 'recalled' })).rejects.toThrow(
      /--metric: .*"recalled".*allowed: success, busy, draw/,
    );
  });

  it('refuses an axis that is not varied, listing the varied parameters', async () => {
    await expect(buildReport({ dir: folder.dir, x: 'tauZPre' })).rejects.toThrow(
      /--x: "tauZPre" is not a varied parameter.*allowed: successRate, burnMs/,
    );
  });
});

describe('buildReport on a half-finished sweep', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    // All 4 replicates for successRate <= 0.5 (12 cells); one replicate for the
    // other 10 points, except (1, 1 ms) which has none: 48 + 9 = 57 of 88 jobs.
    folder = await makeSweepFolder(BURN_SWEEP, (job) => {
      const rate = job.point['successRate'] as number;
      if (rate <= 0.5) return true;
      if (rate === 1 && job.point['burnMs'] === 1) return false;
      return job.replicate === 0;
    });
    // A job that failed, and a torn last line (a writer killed mid-write).
    const store = ResultStore.open(folder.dir);
    const writer = store.openWriter('test-writer-2');
    writer.appendFailure({
      v: 1,
      key: 'a'.repeat(32),
      sweepHash: folder.sweep.hash,
      kind: 'crashed',
      message: 'worker died',
      point: { successRate: 1, burnMs: 1 },
      replicate: 2,
      writer: 'test-writer-2',
      run: 'run-2',
      at: '2026-01-01T00:00:00.000Z',
      attempt: 1,
    });
    writer.close();
    await appendFile(join(folder.dir, 'results', 'test-writer-1.ndjson'), '{"v":1,"key":"0123');
  });
  afterAll(async () => folder.cleanup());

  it('marks the cells with fewer trials than planned and leaves the empty one blank', async () => {
    const result = await buildReport({ dir: folder.dir });
    expect(folder.written).toBe(57);
    expect(result.completedJobs).toBe(57);
    expect(result.plannedJobs).toBe(88);
    // 9 points with one of 4 replicates are incomplete; (1, 1 ms) has none: empty, not incomplete.
    expect(result.incompleteCells).toBe(9);
    expect(result.emptyCells).toBe(1);
    const svg = await readFile(join(folder.dir, 'report', 'phase-success.svg'), 'utf8');
    const cells = cellTags(svg);
    expect(cells.filter((c) => /class="cell [^"]*incomplete/.test(c)).length).toBe(9);
    const empty = cells.filter((c) => /class="cell empty/.test(c));
    expect(empty.length).toBe(1);
    expect(empty[0]).toContain('class="cell empty complete"');
    // Hatching is drawn over exactly the incomplete cells, not over the empty one.
    const marks = /<g class="incomplete-marks"[^>]*>([\s\S]*?)<\/g>/.exec(svg)?.[1] ?? '';
    expect((marks.match(/<rect /g) ?? []).length).toBe(9);
    const emptyX = attr(empty[0] ?? '', 'x');
    const emptyY = attr(empty[0] ?? '', 'y');
    expect(marks).not.toContain(`x="${emptyX}" y="${emptyY}"`);
    expect(svg).toContain('fewer trials than planned');
    expect(svg).toContain('no trials yet');
  });

  it('states the completed fraction, the failures and the torn line in index.html', async () => {
    await buildReport({ dir: folder.dir, formats: ['html'] });
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    // 57 / 88 = 64.77%, rounded down to 64.7% (worked by hand)
    expect(html).toContain('57 of 88 (64.7% complete)');
    expect(html).toContain('crashed: 1');
    expect(html).toMatch(/<div class="warnings" id="warnings">[\s\S]*torn-line/);
  });
});

describe('buildReport on a sampled sweep', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(`
name: burn-lhs
model: cpu-burn
seed: 9
replicates: 2
vary:
  successRate: { between: [0, 1] }
  burnMs: { among: [0, 1] }
sampler: { kind: lhs, points: 40 }
`);
  });
  afterAll(async () => folder.cleanup());

  it('writes one row per sampled point, with its own trials, and one marker per point', async () => {
    await buildReport({ dir: folder.dir, bins: 4, formats: ['csv', 'svg'] });
    const { header, rows } = parseCsv(await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8'));
    expect(header.slice(0, 4)).toEqual(['successRate', 'burnMs', 'n', 'planned']);
    const records = await readShardRecords(folder.dir);
    expect(records.length).toBe(80);
    // 40 Latin hypercube points (distinct successRate values), 2 replicates each.
    expect(rows.length).toBe(40);
    for (const row of rows) {
      const [rate, burn, n, planned] = row.map(Number);
      expect(planned).toBe(2);
      expect(n).toBe(records.filter((r) => r.point['successRate'] === rate && r.point['burnMs'] === burn).length);
    }
    const svg = await readFile(join(folder.dir, 'report', 'phase-success.svg'), 'utf8');
    // Numbers on both axes: one marker per sampled point, carrying its own trials.
    const markers = [...svg.matchAll(/<circle class="point" [^>]*>/g)].map((m) => m[0]);
    expect(markers.length).toBe(40);
    expect(markers.reduce((sum, c) => sum + Number(attr(c, 'data-n')), 0)).toBe(80);
  });
});
