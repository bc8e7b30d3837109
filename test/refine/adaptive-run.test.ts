import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, shardLines, shardRecords, startCli, waitFor } from '../cli/cli-helpers.js';

// Small and quick: one row of six starting points, batches of 8 up to 32, two rounds.
const SWEEP = `name: adaptive-kill
model: bcpnn-sequences
seed: 11
fixed: { hypercolumns: 6, minicolumns: 12, sequenceLength: 6, sequenceCount: 2, noise: 2, overlapLength: 2 }
vary:
  patternOverlap: { from: 0, to: 1, steps: 6 }
refine:
  replicates: { start: 8, max: 32 }
  rounds: 2
report: { x: patternOverlap }
`;

let dir: string;
let file: string;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-adaptive-'));
  file = join(dir, 'adaptive.yaml');
  await writeFile(file, SWEEP);
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Sorted "point#replicate" of every result, and whether any key appears twice. */
async function trialsOf(out: string): Promise<{ trials: string[]; keys: string[] }> {
  const records = await shardRecords(join(dir, out, 'adaptive-kill', 'results'));
  return {
    trials: records.map((r) => `${JSON.stringify(r['point'])}#${String(r['replicate'])}`).sort(),
    keys: records.map((r) => String(r['key'])).sort(),
  };
}

describe('recallscape run on an adaptive sweep', () => {
  it('ends with the same points and replicates after a kill -9 and a rerun as an uninterrupted run', async () => {
    const whole = await runCli(['run', file, '--out', 'whole', '--threads', '2'], dir);
    expect(whole.stderr).toBe('');
    expect(whole.code).toBe(0);
    const uninterrupted = await trialsOf('whole');
    // Points beyond the starting grid (0, 0.2, ..., 1) were added: the run went past the first round.
    const xs = new Set(
      uninterrupted.trials.map((t) => (JSON.parse(t.split('#')[0]!) as { patternOverlap: number }).patternOverlap),
    );
    expect([...xs].some((x) => ![0, 0.2, 0.4, 0.6, 0.8, 1].includes(x))).toBe(true);
    // More than the 48 trials of the starting batches.
    expect(uninterrupted.trials.length).toBeGreaterThan(48);

    const folder = join(dir, 'killed', 'adaptive-kill', 'results');
    const first = startCli(['run', file, '--out', 'killed', '--threads', '2'], dir);
    await waitFor(async () => (await shardLines(folder)).filter((l) => l.complete).length >= 20, 120_000, 20);
    first.child.kill('SIGKILL');
    expect((await first.done).signal).toBe('SIGKILL');
    const partial = (await trialsOf('killed')).trials.length;
    expect(partial).toBeLessThan(uninterrupted.trials.length);

    const second = await runCli(['run', file, '--out', 'killed', '--threads', '2'], dir);
    expect(second.code).toBe(0);
    const resumed = await trialsOf('killed');
    expect(resumed.trials).toEqual(uninterrupted.trials);
    // Same job keys (hence seeds), and no job twice.
    expect(resumed.keys).toEqual(uninterrupted.keys);
    expect(new Set(resumed.keys).size).toBe(resumed.keys.length);
  }, 300_000);

  it('shows the trials of an adaptive sweep as a range in plan', async () => {
    const plan = await runCli(['plan', file, '--calibrate', '0'], dir);
    expect(plan.code).toBe(0);
    // 6 points x 8 at best; worst: 5 gaps split two rounds deep add 15 points -> 21 x 32 = 672 (by hand).
    expect(plan.stdout).toMatch(/jobs\s+48 to 672 \(adaptive/);
    expect(plan.stdout).toContain('worst case');
  });
});
