import { execFile } from 'node:child_process';
import * as fs from 'node:fs';
import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { type RunProgress, runSweep } from '../../coordinator/run-sweep.js';
import { createLogger } from '../../shared/logger.js';
import { type ShardFs, ShardWriteError } from '../../shared/store/result-store.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// Threads run the compiled entry (npm test builds first); this test imports the runner from sources.
const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);

let root = '';
beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-runsweep-'));
});
afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

function quietLogger(): { logger: ReturnType<typeof createLogger>; lines: () => Array<Record<string, unknown>> } {
  const chunks: string[] = [];
  const destination = new Writable({
    write(chunk: Buffer, _enc, done) {
      chunks.push(chunk.toString());
      done();
    },
  });
  return {
    logger: createLogger({ name: 'test', destination }),
    lines: () =>
      chunks
        .join('')
        .split('\n')
        .filter((l) => l !== '')
        .map((l) => JSON.parse(l) as Record<string, unknown>),
  };
}

/** Every complete line of every shard in a folder, parsed. */
async function readShards(folder: string): Promise<Array<Record<string, unknown>>> {
  const out: Array<Record<string, unknown>> = [];
  let names: string[] = [];
  try {
    names = await readdir(folder);
  } catch {
    return out;
  }
  for (const name of names.filter((n) => n.endsWith('.ndjson'))) {
    const text = await readFile(join(folder, name), 'utf8');
    if (text !== '') expect(text.endsWith('\n')).toBe(true);
    for (const line of text.split('\n')) if (line !== '') out.push(JSON.parse(line) as Record<string, unknown>);
  }
  return out;
}

const NO_OP = `
name: noop-run
model: no-op
seed: 11
replicates: 3
vary:
  value: { from: 1, to: 10, steps: 10 }
`;

const BURN = `
name: burn-run
model: cpu-burn
seed: 4
replicates: 6
fixed: { burnMs: 60 }
vary:
  successRate: { list: [0.2, 0.8] }
`;

describe('runSweep', () => {
  it('runs every planned job once and finds nothing left to do the second time', async () => {
    const sweep = parseSweepText(NO_OP, 'noop.yaml');
    const { logger } = quietLogger();
    const first = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(first).toMatchObject({
      planned: 30,
      alreadyDone: 0,
      ran: 30,
      succeeded: 30,
      failed: 0,
      missing: 0,
      stopped: null,
    });
    const records = await readShards(join(root, 'noop-run', 'results'));
    const planned = [...expandJobs(sweep)];
    expect(records.map((r) => r['key']).sort()).toEqual(planned.map((j) => j.key).sort());
    // no-op echoes its `value` parameter back as a metric.
    for (const r of records)
      expect((r['metrics'] as { value: number }).value).toBe((r['point'] as { value: number }).value);
    const second = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(second).toMatchObject({ planned: 30, alreadyDone: 30, ran: 0, missing: 0, stopped: null });
    expect(await readShards(join(root, 'noop-run', 'results'))).toHaveLength(30);
  });

  it('records failed jobs with kind, message and attempt, and tries them again on the next run', async () => {
    const real = parseSweepText(NO_OP, 'noop.yaml');
    // Jobs for a model version this build does not have: every thread reports them unsupported.
    const sweep: LoadedSweep = { ...real, model: { ...real.model, version: '999' } };
    const { logger, lines } = quietLogger();
    const first = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(first).toMatchObject({ planned: 30, ran: 30, succeeded: 0, failed: 30, missing: 30 });
    const failures = await readShards(join(root, 'noop-run', 'failures'));
    expect(failures).toHaveLength(30);
    for (const f of failures) {
      expect(f['kind']).toBe('unsupported');
      expect(f['message']).toContain('version 999');
      expect(f['attempt']).toBe(1);
    }
    expect(lines().some((l) => l['level'] === 40 && String(l['msg']).startsWith('job failed'))).toBe(true);
    const second = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(second).toMatchObject({ alreadyDone: 0, ran: 30, failed: 30 });
    const all = await readShards(join(root, 'noop-run', 'failures'));
    expect(all).toHaveLength(60);
    const attempts = new Map<string, number[]>();
    for (const f of all)
      attempts.set(String(f['key']), [...(attempts.get(String(f['key'])) ?? []), Number(f['attempt'])]);
    for (const list of attempts.values()) expect(list.sort()).toEqual([1, 2]);
  });

  it('stops taking jobs on the graceful signal, writes the running ones, and resumes the rest later', async () => {
    const sweep = parseSweepText(BURN, 'burn.yaml');
    const { logger } = quietLogger();
    const stop = new AbortController();
    const onProgress = (p: RunProgress): void => {
      if (p.succeeded >= 2) stop.abort();
    };
    const first = await runSweep({
      sweep,
      root,
      threads: 2,
      logger,
      threadEntry: ENTRY,
      signal: stop.signal,
      onProgress,
    });
    expect(first.stopped).toBe('graceful');
    expect(first.succeeded).toBeGreaterThanOrEqual(2);
    // The stop came at the second result; at most one job per thread was still running then.
    expect(first.succeeded).toBeLessThanOrEqual(2 + 2);
    expect(first.missing).toBe(12 - first.succeeded);
    const written = await readShards(join(root, 'burn-run', 'results'));
    expect(written).toHaveLength(first.succeeded);
    const second = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(second).toMatchObject({
      alreadyDone: first.succeeded,
      ran: 12 - first.succeeded,
      missing: 0,
      stopped: null,
    });
    const keys = (await readShards(join(root, 'burn-run', 'results'))).map((r) => r['key']);
    expect(new Set(keys).size).toBe(12);
    expect(keys).toHaveLength(12);
  });

  it('abandons running jobs on the second signal without writing half a record', async () => {
    const sweep = parseSweepText(BURN.replace('burnMs: 60', 'burnMs: 3000'), 'burn.yaml');
    const { logger } = quietLogger();
    const graceful = new AbortController();
    const abandon = new AbortController();
    const onProgress = (p: RunProgress): void => {
      // Both jobs are running: the first signal, then the second right after it.
      if (p.running === 2 && !graceful.signal.aborted) {
        graceful.abort();
        abandon.abort();
      }
    };
    const result = await runSweep({
      sweep,
      root,
      threads: 2,
      logger,
      threadEntry: ENTRY,
      signal: graceful.signal,
      abandonSignal: abandon.signal,
      onProgress,
    });
    expect(result.stopped).toBe('abandoned');
    expect(result.ran).toBe(0);
    expect(result.missing).toBe(12);
    expect(await readShards(join(root, 'burn-run', 'results'))).toHaveLength(0);
  });

  it('stops at once after a shard write fails part-way, appends nothing after the torn line, and a resume runs only the jobs without a complete record', async () => {
    const sweep = parseSweepText(NO_OP, 'noop.yaml');
    const { logger } = quietLogger();
    const faulty = failingFs(5);
    const error = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY, shardFs: faulty.fs }).then(
      () => undefined,
      (e: unknown) => e as Error,
    );
    expect(error).toBeInstanceOf(ShardWriteError);
    expect(error?.message).toContain('ENOSPC');
    expect(error?.message).not.toContain('\n');
    // Nothing was written after the failing call (the disk "works" again by then).
    expect(faulty.callsAfterFailure()).toBe(0);

    const resultsDir = join(root, 'noop-run', 'results');
    const [shard] = await readdir(resultsDir);
    const text = await readFile(join(resultsDir, shard!), 'utf8');
    expect(text.endsWith('\n')).toBe(false);
    const lines = text.split('\n');
    const torn = lines.pop()!;
    // The call that carried line 5 tore its last line: at least lines 1-4 are whole.
    expect(lines.length).toBeGreaterThanOrEqual(4);
    const complete = lines.map((l) => JSON.parse(l) as { key: string });
    expect(torn.match(/"key"/g) ?? []).toHaveLength(1);
    expect(() => JSON.parse(torn) as unknown).toThrow();

    const resumed = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(resumed).toMatchObject({
      planned: 30,
      alreadyDone: complete.length,
      ran: 30 - complete.length,
      succeeded: 30 - complete.length,
      missing: 0,
    });
    const again = (await readdir(resultsDir)).filter((n) => n !== shard);
    expect(again).toHaveLength(1);
    const second = (await readFile(join(resultsDir, again[0]!), 'utf8'))
      .trimEnd()
      .split('\n')
      .map((l) => JSON.parse(l) as { key: string });
    const firstKeys = new Set(complete.map((r) => r.key));
    for (const r of second) expect(firstKeys.has(r.key)).toBe(false);
    expect(new Set([...firstKeys, ...second.map((r) => r.key)]).size).toBe(30);
  });

  it('abandons a long running job when a shard write fails instead of waiting for it', async () => {
    // Job 1 takes no time; job 2 would busy-wait ten minutes. The write of job 1's result fails.
    const sweep = parseSweepText(
      'name: burn-fault\nmodel: cpu-burn\nseed: 1\nvary:\n  burnMs: { list: [0, 600000] }\n',
      'burn.yaml',
    );
    const { logger } = quietLogger();
    const faulty = failingFs(1);
    // A run that waited for the ten-minute job would outlive the test's time limit.
    const outcome = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY, shardFs: faulty.fs }).then(
      () => 'finished',
      (e: unknown) => e,
    );
    expect(outcome).toBeInstanceOf(ShardWriteError);
    expect(faulty.callsAfterFailure()).toBe(0);
  });

  it('ends the real CLI with exit code 1 and a one-line message when the results file hits the size limit', async () => {
    const file = join(root, 'sweep.yaml');
    await writeFile(file, NO_OP);
    const cli = join(process.cwd(), 'bin', 'recallscape.js');
    // `ulimit -f 2`: no file may grow past 2048 bytes; a result line is a few hundred bytes,
    // so a write fails part-way (EFBIG) after a few records (common practice, no source).
    const run = (limit: string): Promise<{ code: number; stderr: string }> =>
      new Promise((resolve) => {
        execFile(
          'bash',
          [
            '-c',
            `${limit} exec "$0" "$@"`,
            process.execPath,
            cli,
            'run',
            file,
            '--out',
            root,
            '--threads',
            '2',
            ...TEST_MODEL_FLAGS,
          ],
          (err, _stdout, stderr) =>
            resolve({ code: err === null ? 0 : Number((err as { code?: unknown }).code), stderr }),
        );
      });
    const first = await run('ulimit -f 2;');
    expect(first.code).toBe(1);
    const messages = first.stderr.split('\n').filter((l) => l.startsWith('recallscape: '));
    expect(messages).toHaveLength(1);
    expect(messages[0]).toMatch(/shard file .*noop-run\/results\/.*\.ndjson failed \(EFBIG/);
    expect(first.stderr).not.toMatch(/\n\s+at /);

    const resultsDir = join(root, 'noop-run', 'results');
    const [shard] = await readdir(resultsDir);
    const lines = (await readFile(join(resultsDir, shard!), 'utf8')).split('\n');
    const torn = lines.pop()!;
    const complete = lines.map((l) => JSON.parse(l) as { key: string });
    expect(complete.length).toBeGreaterThan(0);
    expect(torn.match(/"key"/g)?.length ?? 0).toBeLessThanOrEqual(1);

    const second = await run('');
    expect(second.code).toBe(0);
    const later = (await readdir(resultsDir)).filter((n) => n !== shard);
    const rerun = (await readFile(join(resultsDir, later[0]!), 'utf8'))
      .trimEnd()
      .split('\n')
      .map((l) => JSON.parse(l) as { key: string });
    expect(rerun).toHaveLength(30 - complete.length);
    expect(new Set([...complete, ...rerun].map((r) => r.key)).size).toBe(30);
  });
});

/**
 * node:fs, except that the write call that carries line number `failAtLine`
 * (1-based, counted over every call) is short by its last 10 bytes and the
 * next call fails with ENOSPC, as a full disk does; later calls succeed again
 * (space freed), so anything appended then would be glued on. Counted in
 * lines, not calls: held lines go out together, so how many calls 30 records
 * take depends on timing.
 */
function failingFs(failAtLine: number): { fs: ShardFs; callsAfterFailure: () => number } {
  let calls = 0;
  let lines = 0;
  let tornAt = 0;
  let failedAt = 0;
  return {
    callsAfterFailure: () => (failedAt === 0 ? -1 : calls - failedAt),
    fs: {
      mkdirSync: (path, options) => fs.mkdirSync(path, options),
      openSync: (path, flags) => fs.openSync(path, flags),
      fdatasyncSync: (fd) => fs.fdatasyncSync(fd),
      closeSync: (fd) => fs.closeSync(fd),
      writeSync(fd, buffer, offset = 0) {
        calls++;
        if (tornAt !== 0 && calls === tornAt + 1) {
          failedAt = calls;
          throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' });
        }
        const view = buffer.subarray(offset);
        for (const byte of view) if (byte === 10) lines++;
        // The call's last line is torn, whatever lines come before it.
        if (tornAt === 0 && lines >= failAtLine) {
          tornAt = calls;
          return fs.writeSync(fd, buffer, offset, buffer.length - offset - 10);
        }
        return fs.writeSync(fd, buffer, offset);
      },
    },
  };
}
