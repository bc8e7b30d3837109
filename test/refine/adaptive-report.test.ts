import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, shardRecords } from '../cli/cli-helpers.js';

// One row of six starting points, batches of 8 up to 32, two rounds (as examples/adaptive-small.yaml).
const SWEEP = `name: adaptive-report
model: bcpnn-sequences
seed: 7
fixed: { hypercolumns: 6, minicolumns: 12, sequenceLength: 6, sequenceCount: 2, noise: 2, overlapLength: 2 }
vary:
  patternOverlap: { from: 0, to: 1, steps: 6 }
refine:
  replicates: { start: 8, max: 32 }
  rounds: 2
report: { x: patternOverlap }
`;

let dir: string;
const folder = (): string => join(dir, 'out', 'adaptive-report');

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-adaptive-report-'));
  await writeFile(join(dir, 'adaptive.yaml'), SWEEP);
  const run = await runCli(['run', 'adaptive.yaml', '--out', 'out', '--threads', '2', '--no-report'], dir);
  expect(run.code).toBe(0);
  const report = await runCli(['report', folder()], dir);
  expect(report.stderr).toBe('');
  expect(report.code).toBe(0);
}, 240_000);

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('the report of a finished adaptive sweep', () => {
  it('plans, per point, the trials the design ran: as many as the result files hold for it', async () => {
    const records = await shardRecords(join(folder(), 'results'));
    const perPoint = new Map<number, number>();
    for (const r of records) {
      const x = (r['point'] as { patternOverlap: number }).patternOverlap;
      perPoint.set(x, (perPoint.get(x) ?? 0) + 1);
    }
    const csv = (await readFile(join(folder(), 'report', 'points.csv'), 'utf8')).trimEnd().split('\n');
    const header = csv[0]!.split(',');
    const at = (name: string): number => header.indexOf(name);
    const rows = csv.slice(1).map((line) => line.split(','));
    expect(rows.length).toBe(perPoint.size);
    for (const row of rows) {
      const x = Number(row[at('patternOverlap')]);
      expect(Number(row[at('planned')])).toBe(perPoint.get(x));
      expect(Number(row[at('n')])).toBe(perPoint.get(x));
    }
    // Midpoints were added beyond the starting grid 0, 0.2, ..., 1.
    expect([...perPoint.keys()].some((x) => ![0, 0.2, 0.4, 0.6, 0.8, 1].includes(x))).toBe(true);
  });

  it('draws every point as a cell of its own, narrower where midpoints were added', async () => {
    const svg = await readFile(join(folder(), 'report', 'phase-success.svg'), 'utf8');
    const cells = [...svg.matchAll(/<rect class="cell [^"]*" x="([^"]+)" y="[^"]+" width="([^"]+)"/g)].map((m) => ({
      x: Number(m[1]),
      width: Number(m[2]),
    }));
    const records = await shardRecords(join(folder(), 'results'));
    const points = new Set(records.map((r) => (r['point'] as { patternOverlap: number }).patternOverlap));
    expect(cells.length).toBe(points.size);
    const widths = cells.map((c) => c.width);
    // Starting points 0.2 apart, midpoints 0.1 or 0.05 from their neighbours: at least two cell sizes.
    expect(Math.min(...widths)).toBeLessThan(0.6 * Math.max(...widths));
    // Cells tile the row without gaps or overlaps.
    const sorted = [...cells].sort((a, b) => a.x - b.x);
    for (let i = 0; i + 1 < sorted.length; i++)
      expect(sorted[i]!.x + sorted[i]!.width).toBeCloseTo(sorted[i + 1]!.x, 1);
  });

  it('writes the border as a crossing between the two points that bracket it, with its interval', async () => {
    const [head, line] = (await readFile(join(folder(), 'report', 'border.csv'), 'utf8')).trimEnd().split('\n');
    expect(head).toBe('patternOverlap_border,patternOverlap_lo,patternOverlap_hi,left,right,points,trials');
    const [border, lo, hi, left, right] = line!.split(',').map(Number);
    expect(left).toBeLessThan(border!);
    expect(right).toBeGreaterThan(border!);
    expect(lo).toBeLessThanOrEqual(border!);
    expect(hi).toBeGreaterThanOrEqual(border!);
  });

  it('is counted by progress against its design, not its starting grid', async () => {
    const records = await shardRecords(join(folder(), 'results'));
    const progress = await runCli(['progress', folder()], dir);
    expect(progress.code).toBe(0);
    expect(progress.stdout).toContain(`planned   ${records.length}\n`);
    expect(progress.stdout).toContain(`finished  ${records.length} (100.0%)`);
  });
});
