import { existsSync } from 'node:fs';
import { appendFile, readdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { findJob } from '../../coordinator/summarize/inspect-job.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { runJob } from '../../worker/run-job.js';
import { runCli } from '../cli/cli-helpers.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// These run the built CLI (node bin/recallscape.js -> dist/): build first.

describe('recallscape report', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    // Half-finished: replicates 0 and 1 of every point (44 of 88 jobs).
    folder = await makeSweepFolder(BURN_SWEEP, (job) => job.replicate < 2);
  });
  afterAll(async () => folder.cleanup());

  it('writes the tables, diagrams and page, and prints the paths and the completed fraction', async () => {
    const result = await runCli(['report', folder.dir, ...TEST_MODEL_FLAGS], folder.root);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('completed 44 of 88 jobs (50.0%)');
    const names = (await readdir(join(folder.dir, 'report'))).sort();
    expect(names).toEqual([
      'border.csv',
      'index.html',
      'phase-success.png',
      'phase-success.svg',
      'points.csv',
      'points.md',
      'sweep.md',
      'trials.csv',
    ]);
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
    const result = await runCli(['report', folder.dir, '--x', 'overlap', ...TEST_MODEL_FLAGS], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('--x');
    expect(result.stderr).toContain('allowed: successRate, burnMs');
    expect(result.stderr).not.toMatch(/\n\s+at /);
  });

  it('exits with 2 for an unknown --metric, listing the metrics of the records', async () => {
    const result = await runCli(['report', folder.dir, '--metric', 'recall', ...TEST_MODEL_FLAGS], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/--metric: .*allowed: success, busy, draw/);
  });

  it('exits with 2 for a folder that is not a sweep', async () => {
    const result = await runCli(['report', join(folder.root, 'nothing-here'), ...TEST_MODEL_FLAGS], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('sweep.json');
    expect(existsSync(join(folder.root, 'nothing-here'))).toBe(false);
  });

  it('exits with 2 for --bins out of range, naming the option and the allowed range', async () => {
    const result = await runCli(['report', folder.dir, '--bins', '1', ...TEST_MODEL_FLAGS], folder.root);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe('recallscape: --bins: must be a whole number from 2 to 200, got "1"\n');
  });

  it('exits with 2 for --log naming a parameter the sweep does not vary, or one with a value of 0', async () => {
    const unknown = await runCli(['report', folder.dir, '--log', 'burnMs,noise', ...TEST_MODEL_FLAGS], folder.root);
    expect(unknown.code).toBe(2);
    expect(unknown.stderr).toBe(
      'recallscape: --log: "noise" is not a varied parameter of this sweep; allowed: successRate, burnMs\n',
    );
    const zero = await runCli(['report', folder.dir, '--log', 'burnMs', ...TEST_MODEL_FLAGS], folder.root);
    expect(zero.code).toBe(2);
    expect(zero.stderr).toBe('recallscape: --log: burnMs has the value 0; a log axis needs numbers greater than 0\n');
  });
});

describe('recallscape report on shards with many damaged lines', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(BURN_SWEEP, (job) => job.replicate === 0);
    // 250 lines that are no records: more than the report keeps in full (200), many more than it prints (10).
    await writeFile(join(folder.dir, 'results', 'junk-writer.ndjson'), 'not a record\n'.repeat(250));
  });
  afterAll(async () => folder.cleanup());

  it('prints the first ten warnings and the true number of the others', async () => {
    const result = await runCli(['report', folder.dir, '--format', 'html', ...TEST_MODEL_FLAGS], folder.root);
    expect(result.code, result.stderr).toBe(0);
    const lines = result.stderr.trimEnd().split('\n');
    expect(lines.slice(0, 10).every((l) => l.startsWith('recallscape: warning: bad-line: '))).toBe(true);
    // 250 - 10 printed = 240 (worked by hand), not 200 - 10.
    expect(lines.slice(10)).toEqual(['recallscape: warning: ... 240 more (index.html lists the first 200)']);
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    expect(html).toContain('250 problem(s) in the result files');
    expect(html).toContain('... and 50 more');
  });
});

describe('recallscape report and progress on a sweep one job short of done', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    // 100 points x 100 replicates = 10000 jobs; every one but the very first has a record.
    let first = true;
    folder = await makeSweepFolder(
      'name: nearly-done\nmodel: no-op\nseed: 2\nreplicates: 100\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n',
      () => {
        const keep = !first;
        first = false;
        return keep;
      },
    );
  });
  afterAll(async () => folder.cleanup());

  it('reads 99.9% in the report, not 100.0%', async () => {
    expect(folder.written).toBe(9999);
    const result = await runCli(['report', folder.dir, '--format', 'html', ...TEST_MODEL_FLAGS], folder.root);
    expect(result.code, result.stderr).toBe(0);
    // 9999 / 10000 = 99.99%, rounded down to one decimal (worked by hand).
    expect(result.stdout).toContain('completed 9999 of 10000 jobs (99.9%)');
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    expect(html).toContain('9999 of 10000 (99.9% complete)');
  });

  it('reads 99.9% in progress, and 100.0% once the last job is done', async () => {
    const before = await runCli(['progress', folder.dir, ...TEST_MODEL_FLAGS], folder.root);
    expect(before.code, before.stderr).toBe(0);
    expect(before.stdout).toMatch(/^finished {2}9999 \(99\.9%\)$/m);
    // Run the missing job as a worker would and store its record.
    const missing = [...expandJobs(folder.sweep)][0];
    if (missing === undefined) throw new Error('the sweep has no jobs');
    const outcome = runJob(toPayload(folder.sweep, missing), { writer: 'last-writer', run: 'run-2' });
    if (!outcome.ok) throw new Error(`the last job failed: ${outcome.message}`);
    await appendFile(join(folder.dir, 'results', 'last-writer.ndjson'), `${JSON.stringify(outcome.record)}\n`);
    const after = await runCli(['progress', folder.dir, ...TEST_MODEL_FLAGS], folder.root);
    expect(after.code, after.stderr).toBe(0);
    expect(after.stdout).toMatch(/^finished {2}10000 \(100\.0%\)$/m);
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
    const records = (await readFile(join(bcpnn.dir, 'results', 'test-writer-1.ndjson'), 'utf8'))
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l));
    expect(records.length).toBe(1);
    const key: string = records[0].key;
    const result = await runCli(['inspect', bcpnn.dir, '--job', key.slice(0, 8), ...TEST_MODEL_FLAGS], bcpnn.root);
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
    // Lines named by sequence and position; no overlap at this point, so no shared pattern.
    expect(svg).toContain('data-label="seq 1 · pos 3"');
    expect(svg).not.toContain('(shared)');
  });

  it('draws a job without a stored result and says so, writing where --file says', async () => {
    const records = (await readFile(join(bcpnn.dir, 'results', 'test-writer-1.ndjson'), 'utf8'))
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l));
    const done = new Set(records.map((r) => r.key));
    // The other point's job has no record.
    const out = join(bcpnn.root, 'trace.svg');
    const missing = [...expandJobs(bcpnn.sweep)].map((j) => j.key).find((k) => !done.has(k)) ?? '';
    expect(missing).toMatch(/^[0-9a-f]{32}$/);
    const result = await runCli(
      ['inspect', bcpnn.dir, '--job', missing, '--file', out, ...TEST_MODEL_FLAGS],
      bcpnn.root,
    );
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('stored record: none yet');
    expect(existsSync(out)).toBe(true);
  });

  it('says clearly that a cpu-burn job has no trace', async () => {
    const line = (await readFile(join(burn.dir, 'results', 'test-writer-1.ndjson'), 'utf8')).split('\n')[0] ?? '';
    const key: string = JSON.parse(line).key;
    const result = await runCli(['inspect', burn.dir, '--job', key, ...TEST_MODEL_FLAGS], burn.root);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('stored record: identical metrics');
    expect(result.stdout).toContain('this model records no trace');
    expect(existsSync(join(burn.dir, 'report'))).toBe(false);
  });

  it('exits with 1 and says the job is not reproducible when the stored metrics differ, still printing the metrics and the trace path', async () => {
    // Runs last on this folder: it changes the stored record.
    const shard = join(bcpnn.dir, 'results', 'test-writer-1.ndjson');
    const stored = JSON.parse((await readFile(shard, 'utf8')).trim()) as {
      key: string;
      metrics: Record<string, unknown>;
    };
    await writeFile(
      shard,
      `${JSON.stringify({ ...stored, metrics: { ...stored.metrics, success: !stored.metrics['success'] } })}\n`,
    );
    const out = join(bcpnn.root, 'differs.svg');
    const result = await runCli(
      ['inspect', bcpnn.dir, '--job', stored.key, '--file', out, ...TEST_MODEL_FLAGS],
      bcpnn.root,
    );
    expect(result.code).toBe(1);
    expect(result.stderr).toContain(
      `recallscape: not reproducible: re-running job ${stored.key} gave other metrics than its stored record`,
    );
    // The re-run's own metrics are the untouched ones.
    expect(result.stdout).toContain(`metrics: ${JSON.stringify(stored.metrics)}`);
    expect(result.stdout).toContain('stored record: DIFFERENT metrics: ');
    expect(result.stdout).toContain(`trace: 2 recall panel(s) drawn to ${out}`);
    expect(existsSync(out)).toBe(true);
  });

  it('exits with 2 for a key that is not in the sweep', async () => {
    const result = await runCli(
      ['inspect', burn.dir, '--job', 'ffffffffffffffffffffffffffffffff', ...TEST_MODEL_FLAGS],
      burn.root,
    );
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
