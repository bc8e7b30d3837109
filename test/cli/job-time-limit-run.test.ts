import { mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';
import { runCli, shardRecords } from './cli-helpers.js';

// Job time limits through the real `run` command: spin (test/fixtures/models) never returns
// when forever is true, so only the limit can end its jobs.

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-limit-run-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Two jobs that never end and two that end at once, on one thread. */
const SPIN = (name: string, extra = ''): string =>
  `name: ${name}\nmodel: spin\nseed: 2\nreplicates: 2\n${extra}vary:\n  forever: { list: [true, false] }\n`;

describe('recallscape run with jobs over their time limit', () => {
  it("fails them as timeout after the sweep's jobTimeoutMs, once each, and runs the other jobs on the replacement thread", async () => {
    await writeFile(join(dir, 'sweep-limit.yaml'), SPIN('sweep-limit', 'jobTimeoutMs: 400\n'));
    const result = await runCli(
      ['run', 'sweep-limit.yaml', '--out', 'out', '--threads', '1', '--no-report', ...TEST_MODEL_FLAGS],
      dir,
    );
    // Some jobs failed: exit code 1 (docs/running.md).
    expect(result.code).toBe(1);
    expect(result.stdout).toContain('4 jobs planned, 0 had results before this run, 4 ran now (2 with errors)');
    const failures = await shardRecords(join(dir, 'out', 'sweep-limit', 'failures'));
    expect(failures).toHaveLength(2);
    for (const failure of failures) {
      expect(failure['kind']).toBe('timeout');
      expect(failure['attempt']).toBe(1);
      expect(failure['point']).toEqual({ forever: true });
      expect(failure['message']).toBe(
        "the job ran over its time limit of 400 ms (the sweep's jobTimeoutMs); its thread was stopped and replaced",
      );
    }
    // With one thread, every job after the first timeout ran on a replacement thread.
    const results = await shardRecords(join(dir, 'out', 'sweep-limit', 'results'));
    expect(results.map((r) => r['point'])).toEqual([{ forever: false }, { forever: false }]);
  });

  it("uses --model-timeout over the model's own limit of ten minutes", async () => {
    await writeFile(join(dir, 'option-limit.yaml'), SPIN('option-limit'));
    const result = await runCli(
      [
        'run',
        'option-limit.yaml',
        '--out',
        'out',
        '--threads',
        '1',
        '--no-report',
        '--model-timeout',
        '300',
        ...TEST_MODEL_FLAGS,
      ],
      dir,
    );
    expect(result.code).toBe(1);
    const failures = await shardRecords(join(dir, 'out', 'option-limit', 'failures'));
    expect(failures.map((f) => f['kind'])).toEqual(['timeout', 'timeout']);
    expect(failures[0]?.['message']).toBe(
      'the job ran over its time limit of 300 ms (set by --model-timeout); its thread was stopped and replaced',
    );
    expect(await shardRecords(join(dir, 'out', 'option-limit', 'results'))).toHaveLength(2);
  });

  it('refuses a jobTimeoutMs that is not a whole number of milliseconds, naming the field, and writes nothing', async () => {
    const cwd = await mkdtemp(join(dir, 'bad-'));
    await writeFile(join(cwd, 'bad.yaml'), SPIN('bad-limit', 'jobTimeoutMs: 2.5\n'));
    const result = await runCli(['run', 'bad.yaml', '--out', 'out', '--threads', '1', ...TEST_MODEL_FLAGS], cwd);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain(
      'jobTimeoutMs: jobTimeoutMs must be a whole number of milliseconds from 1 to 604800000 (one week)',
    );
    expect(result.stdout).toBe('');
    expect(await readdir(cwd)).toEqual(['bad.yaml']);
  });

  it('does not time out a demo-sized job of the built-in model under the default limit', async () => {
    // The demo's network (examples/demo.yaml), two trials; nothing sets a limit, so each gets the default (60 s at least).
    await writeFile(
      join(dir, 'demo-size.yaml'),
      'name: demo-size\nseed: 4\nreplicates: 2\nfixed: { hypercolumns: 10, minicolumns: 20, sequenceLength: 6 }\n',
    );
    const result = await runCli(['run', 'demo-size.yaml', '--out', 'out', '--threads', '1', '--no-report'], dir);
    expect(result.code).toBe(0);
    expect(await shardRecords(join(dir, 'out', 'demo-size', 'results'))).toHaveLength(2);
    expect(await shardRecords(join(dir, 'out', 'demo-size', 'failures'))).toEqual([]);
  });
});
