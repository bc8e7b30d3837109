import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { runSweep, type RunProgress } from '../../coordinator/run-sweep.js';
import { createLogger } from '../../shared/logger.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { parseSweepText, type LoadedSweep } from '../../shared/sweep/load.js';

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
    expect(first).toMatchObject({ planned: 30, alreadyDone: 0, ran: 30, succeeded: 30, failed: 0, missing: 0, stopped: null });
    const records = await readShards(join(root, 'noop-run', 'results'));
    const planned = [...expandJobs(sweep)];
    expect(records.map((r) => r['key']).sort()).toEqual(planned.map((j) => j.key).sort());
    // no-op echoes its `value` parameter back as a metric.
    for (const r of records) expect((r['metrics'] as { value: number }).value).toBe((r['point'] as { value: number }).value);
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
    for (const f of all) attempts.set(String(f['key']), [...(attempts.get(String(f['key'])) ?? []), Number(f['attempt'])]);
    for (const list of attempts.values()) expect(list.sort()).toEqual([1, 2]);
  });

  it('stops taking jobs on the graceful signal, writes the running ones, and resumes the rest later', async () => {
    const sweep = parseSweepText(BURN, 'burn.yaml');
    const { logger } = quietLogger();
    const stop = new AbortController();
    const onProgress = (p: RunProgress): void => {
      if (p.succeeded >= 2) stop.abort();
    };
    const first = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY, signal: stop.signal, onProgress });
    expect(first.stopped).toBe('graceful');
    expect(first.succeeded).toBeGreaterThanOrEqual(2);
    expect(first.succeeded).toBeLessThan(12);
    expect(first.missing).toBe(12 - first.succeeded);
    const written = await readShards(join(root, 'burn-run', 'results'));
    expect(written).toHaveLength(first.succeeded);
    const second = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY });
    expect(second).toMatchObject({ alreadyDone: first.succeeded, ran: 12 - first.succeeded, missing: 0, stopped: null });
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
      if (p.running === 2 && !graceful.signal.aborted) {
        graceful.abort();
        setTimeout(() => abandon.abort(), 50);
      }
    };
    const result = await runSweep({ sweep, root, threads: 2, logger, threadEntry: ENTRY, signal: graceful.signal, abandonSignal: abandon.signal, onProgress });
    expect(result.stopped).toBe('abandoned');
    expect(result.ran).toBe(0);
    expect(result.missing).toBe(12);
    expect(await readShards(join(root, 'burn-run', 'results'))).toHaveLength(0);
  });
});
