import { existsSync } from 'node:fs';
import { readFile, readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { findJob } from '../../coordinator/summarize/inspect-job.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { runCli } from '../cli/cli-helpers.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

// These run the built CLI (node bin/recallscape.js -> dist/): build first.

describe('recallscape report', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    // Half-finished: replicates 0 and 1 of every point (44 of 88 jobs).
    folder = await makeSweepFolder(BURN_SWEEP, (job) => job.replicate < 2);
  });
  afterAll(async () => folder.cleanup());

  it('writes the tables, diagrams and page, and prints the paths and the completed fraction', async () => {
    const result = await runCli(['report', folder.dir], folder.root);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('completed 44 of 88 jobs (50.0%)');
    const names = (await readdir(join(folder.dir, 'report'))).sort();
    expect(names).toEqual(['index.html', 'phase-success.png', 'phase-success.svg', 'points.csv', 'points.md']);
    for (const name of names) expect(result.stdout).toContain(join('report', name));
    const csv = (await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8')).trimEnd().split('\n');
    expect(csv.length).toBe(1 + 22);
    const md = (await readFile(join(folder.dir, 'report', 'points.md'), 'utf8')).trimEnd().split('\n');
    // Heading, blank line, header row, separator, 22 rows.
    expect(md.length).toBe(4 + 22);
    expect(md[3]).toMatch(/^\| ---: \|/);
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    expect(html).toContain('44 of 88 (50.0% complete)');
    // No temporary files left behind.
    expect(names.some((n) => n.endsWith('.tmp'))).toBe(false);
  });

  it('exits with 2 for an unknown --x, naming the option and the allowed parameters', async () => {
    const result = await runCli(['report', folder.dir, '--x', 'overlap'], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('--x');
    expect(result.stderr).toContain('allowed: successRate, burnMs');
    expect(result.stderr).not.toMatch(/\n\s+at /);
  });

  it('exits with 2 for an unknown --metric, listing the metrics of the records', async () => {
    const result = await runCli(['report', folder.dir, '--metric', 'recall'], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/--metric: .*allowed: success, busy, draw/);
  });

  it('exits with 2 for a folder that is not a sweep', async () => {
    const result = await runCli(['report', join(folder.root, 'nothing-here')], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('sweep.json');
    expect(existsSync(join(folder.root, 'nothing-here'))).toBe(false);
  });
});

describe('recallscape inspect', () => {
  let burn: SweepFolder;
  let bcpnn: SweepFolder;
  beforeAll(async () => {
    burn = await makeSweepFolder(BURN_SWEEP, (job) => job.replicate === 0 && job.point['burnMs'] === 0);
    // Two sequences of 4 patterns in a small network, overlap at the middle
    // positions: one point that fails at full overlap, one that succeeds.
    bcpnn = await makeSweepFolder(
      `
name: inspect-bcpnn
model: bcpnn-sequences
seed: 3
replicates: 1
fixed: { hypercolumns: 6, minicolumns: 12, sequenceLength: 4, epochs: 2, recallDuration: 400 }
vary:
  patternOverlap: { list: [0, 1] }
  overlapLength: { list: [2] }
`,
      (job) => job.point['patternOverlap'] === 0,
    );
  });
  afterAll(async () => {
    await burn.cleanup();
    await bcpnn.cleanup();
  });

  it('re-runs a bcpnn-sequences job, matches its stored metrics and draws one panel per recall with the cue window', async () => {
    const records = (await readFile(join(bcpnn.dir, 'results', 'test-writer-1.ndjson'), 'utf8')).trim().split('\n').map((l) => JSON.parse(l));
    expect(records.length).toBe(1);
    const key: string = records[0].key;
    const result = await runCli(['inspect', bcpnn.dir, '--job', key.slice(0, 8)], bcpnn.root);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout).toContain(`job ${key}`);
    expect(result.stdout).toContain('stored record: identical metrics');
    expect(result.stdout).toContain(`metrics: ${JSON.stringify(records[0].metrics)}`);
    const path = join(bcpnn.dir, 'report', `inspect-${key}.svg`);
    expect(result.stdout).toContain(path);
    const svg = await readFile(path, 'utf8');
    // sequenceCount defaults to 2: one recall per sequence.
    const panels = [...svg.matchAll(/<g class="trace-panel"[^>]*>/g)];
    expect(panels.length).toBe(2);
    expect((svg.match(/class="cue-window"/g) ?? []).length).toBe(2);
    // 2 sequences x 4 patterns, no overlap: 8 distinct patterns, one line each per panel.
    expect((svg.match(/<path class="series"/g) ?? []).length).toBe(2 * 8);
    // The cue window ends at the default cue duration, 50 ms (model-spec.md defaults).
    expect(svg).toContain('data-end-ms="50"');
  });

  it('draws a job without a stored result and says so, writing where --out says', async () => {
    const records = (await readFile(join(bcpnn.dir, 'results', 'test-writer-1.ndjson'), 'utf8')).trim().split('\n').map((l) => JSON.parse(l));
    const done = new Set(records.map((r) => r.key));
    // The other point's job has no record.
    const out = join(bcpnn.root, 'trace.svg');
    const missing = [...expandJobs(bcpnn.sweep)].map((j) => j.key).find((k) => !done.has(k)) ?? '';
    expect(missing).toMatch(/^[0-9a-f]{32}$/);
    const result = await runCli(['inspect', bcpnn.dir, '--job', missing, '--out', out], bcpnn.root);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('stored record: none yet');
    expect(existsSync(out)).toBe(true);
  });

  it('says clearly that a cpu-burn job has no trace', async () => {
    const line = (await readFile(join(burn.dir, 'results', 'test-writer-1.ndjson'), 'utf8')).split('\n')[0] ?? '';
    const key: string = JSON.parse(line).key;
    const result = await runCli(['inspect', burn.dir, '--job', key], burn.root);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('stored record: identical metrics');
    expect(result.stdout).toContain('this model records no trace');
    expect(existsSync(join(burn.dir, 'report'))).toBe(false);
  });

  it('exits with 2 for a key that is not in the sweep', async () => {
    const result = await runCli(['inspect', burn.dir, '--job', 'ffffffffffffffffffffffffffffffff'], burn.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('--job: no job of this sweep');
  });

  it('rejects a key that is not hex and a prefix that fits several jobs', () => {
    const jobs = [...expandJobs(burn.sweep)];
    expect(() => findJob(jobs, 'XYZ')).toThrow(/--job: .*hex/);
    // With 88 jobs, some one-digit prefix is shared by several keys.
    const digits = '0123456789abcdef'.split('');
    const shared = digits.find((d) => jobs.filter((j) => j.key.startsWith(d)).length > 1) ?? '';
    expect(() => findJob(jobs, shared)).toThrow(/--job: .*matches more than one job/);
    const job = jobs[7];
    expect(findJob(jobs, job?.key.slice(0, 12) ?? '')).toBe(job);
  });
});
