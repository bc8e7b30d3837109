import { appendFile, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { expandJobs } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import { runCli, shardLines, shardRecords, startCli, waitFor } from './cli-helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// 60 jobs of ~40 ms busy time: over a second on 2 threads, long enough to interrupt.
const SWEEP = `
name: burn-resume
model: cpu-burn
seed: 17
replicates: 10
fixed: { burnMs: 40 }
vary:
  successRate: { from: 0, to: 1, steps: 6 }
`;

// Jobs that take no time, for the torn-line check.
const ECHO_SWEEP = `
name: echo-torn
model: no-op
seed: 5
replicates: 6
vary:
  value: { from: 1, to: 5, steps: 5 }
`;

// 96 trials of the real model (the small network of model-spec.md): a second
// or more on 2 threads, so a kill lands part way.
const MODEL_SWEEP = `
name: bcpnn-resume
model: bcpnn-sequences
seed: 23
replicates: 16
fixed: { hypercolumns: 10, minicolumns: 20, sequenceLength: 6, sequenceCount: 2 }
vary:
  patternOverlap: { list: [0.4, 1] }
  overlapLength: { list: [1, 2, 3] }
`;

let dir = '';
let file = '';
let modelFile = '';
let plannedKeys: string[] = [];
let modelKeys: string[] = [];

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-cli-run-'));
  file = join(dir, 'burn.yaml');
  modelFile = join(dir, 'bcpnn.yaml');
  await writeFile(file, SWEEP);
  await writeFile(modelFile, MODEL_SWEEP);
  // The planned job keys, from the library (not from the run under test).
  plannedKeys = [...expandJobs(parseSweepText(SWEEP, 'burn.yaml'))].map((j) => j.key).sort();
  modelKeys = [...expandJobs(parseSweepText(MODEL_SWEEP, 'bcpnn.yaml'))].map((j) => j.key).sort();
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const resultsOf = (out: string, name = 'burn-resume'): string => join(dir, out, name, 'results');

function byKey(records: Array<Record<string, unknown>>): Map<string, Array<Record<string, unknown>>> {
  const map = new Map<string, Array<Record<string, unknown>>>();
  for (const r of records) map.set(String(r['key']), [...(map.get(String(r['key'])) ?? []), r]);
  return map;
}

describe('recallscape run, interrupted and resumed', () => {
  it('resumes after SIGKILL, twice, without losing or repeating a finished job, with the metrics of an uninterrupted run', async () => {
    expect(modelKeys).toHaveLength(96);
    const killedResults = resultsOf('killed', 'bcpnn-resume');
    const completeKeys = async (): Promise<Set<string>> =>
      new Set((await shardRecords(killedResults)).map((r) => String(r['key'])));
    const first = startCli(['run', modelFile, '--out', 'killed', '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    await waitFor(async () => (await shardLines(killedResults)).filter((l) => l.complete).length >= 6, 60_000, 20);
    first.child.kill('SIGKILL');
    const killed = await first.done;
    expect(killed.signal).toBe('SIGKILL');

    const firstRecords = await shardRecords(killedResults);
    const firstKeys = new Set(firstRecords.map((r) => String(r['key'])));
    expect(firstKeys.size).toBeGreaterThanOrEqual(6);
    expect(firstKeys.size).toBeLessThan(96);

    // The resumed run is killed part way too: records still wait for their group commit then.
    const resumed = startCli(['run', modelFile, '--out', 'killed', '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    await waitFor(async () => (await completeKeys()).size >= firstKeys.size + 6, 60_000, 20);
    resumed.child.kill('SIGKILL');
    expect((await resumed.done).signal).toBe('SIGKILL');
    const beforeLast = await completeKeys();
    expect(beforeLast.size).toBeLessThan(96);

    const second = await runCli(['run', modelFile, '--out', 'killed', '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    expect(second.stderr).not.toContain('recallscape:');
    expect(second.code).toBe(0);
    expect(second.stdout).toContain(`${beforeLast.size} had results before this run`);

    const all = await shardRecords(killedResults);
    const grouped = byKey(all);
    // Every planned key has exactly one record: nothing lost, nothing run twice.
    expect([...grouped.keys()].sort()).toEqual(modelKeys);
    for (const records of grouped.values()) expect(records).toHaveLength(1);
    // Three invocations wrote records; the last ran exactly the jobs the two killed ones had not finished.
    const firstRun = String(firstRecords[0]!['run']);
    expect(new Set(firstRecords.map((r) => r['run']))).toEqual(new Set([firstRun]));
    expect(new Set(all.map((r) => r['run'])).size).toBe(3);
    const lastRun = all.filter((r) => !beforeLast.has(String(r['key'])));
    expect(new Set(lastRun.map((r) => r['run'])).size).toBe(1);
    expect(lastRun.length).toBe(96 - beforeLast.size);
    expect(lastRun.every((r) => r['run'] !== firstRun)).toBe(true);

    const fresh = await runCli(['run', modelFile, '--out', 'fresh', '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    expect(fresh.code).toBe(0);
    const freshByKey = byKey(await shardRecords(resultsOf('fresh', 'bcpnn-resume')));
    expect([...freshByKey.keys()].sort()).toEqual(modelKeys);
    for (const key of modelKeys) {
      const a = grouped.get(key)![0]!;
      const b = freshByKey.get(key)![0]!;
      expect(a['metrics']).toEqual(b['metrics']);
      expect(a['seed']).toBe(b['seed']);
    }
    // The sweep mixes outcomes, so equal metrics are not equal by accident (model-spec.md:
    // at these defaults recall succeeds up to patternOverlap 0.6 and fails at 1 for overlapLength >= 1).
    const successes = [...freshByKey.values()].map((r) => (r[0]!['metrics'] as { success: boolean }).success);
    expect(successes).toContain(true);
    expect(successes).toContain(false);
  });

  it('warns about a torn last line, ignores it, and runs that job again on resume', async () => {
    const out = 'torn';
    const echoFile = join(dir, 'echo.yaml');
    await writeFile(echoFile, ECHO_SWEEP);
    const done = await runCli(['run', echoFile, '--out', out, '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    expect(done.code).toBe(0);
    const folder = resultsOf(out, 'echo-torn');
    const [shard] = (await readdir(folder)).filter((n) => n.endsWith('.ndjson'));
    const path = join(folder, shard!);
    const lines = (await readFile(path, 'utf8')).split('\n').filter((l) => l !== '');
    // Cut the last record in half, as a kill in the middle of a write would.
    const victim = JSON.parse(lines.at(-1)!) as { key: string; run: string };
    await writeFile(path, `${lines.slice(0, -1).join('\n')}\n`);
    await appendFile(path, lines.at(-1)!.slice(0, 70));
    expect(await readFile(path, 'utf8')).not.toMatch(/\n$/);

    const again = await runCli(['run', echoFile, '--out', out, '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    expect(again.code).toBe(0);
    // One plain line in the program's voice, naming the file and line (no JSON log line).
    const warnings = again.stderr.split('\n').filter((l) => l !== '');
    expect(warnings).toEqual([
      `recallscape: warning: ${path}:${lines.length}: incomplete last line (a write was cut short); ignored, its job counts as not done`,
    ]);
    expect(again.stdout).toContain('29 had results before this run, 1 ran now');
    const records = (await shardRecords(folder)).filter((r) => r['key'] === victim.key);
    expect(records).toHaveLength(1);
    expect(records[0]!['run']).not.toBe(victim.run);
  });

  it('stops gracefully on SIGINT with exit code 130, leaves no torn line, and a second run completes', async () => {
    const out = 'interrupted';
    const run = startCli(['run', file, '--out', out, '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    await waitFor(async () => (await shardLines(resultsOf(out))).length >= 4, 60_000);
    run.child.kill('SIGINT');
    const stopped = await run.done;
    expect(stopped.code).toBe(130);
    expect(stopped.stdout).toContain('stopped by a signal');
    expect(stopped.stdout).toMatch(/resume with: recallscape run \S+burn\.yaml --out interrupted --threads 2/);
    const lines = await shardLines(resultsOf(out));
    expect(lines.every((l) => l.complete)).toBe(true);
    expect(lines.length).toBeLessThan(60);

    const resumed = await runCli(['run', file, '--out', out, '--threads', '2', ...TEST_MODEL_FLAGS], dir);
    expect(resumed.code).toBe(0);
    expect(resumed.stdout).toContain(`${lines.length} had results before this run`);
    const keys = (await shardRecords(resultsOf(out))).map((r) => String(r['key'])).sort();
    expect(keys).toEqual(plannedKeys);
  });
});
