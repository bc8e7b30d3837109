import * as fs from 'node:fs';
import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { FailureRecord } from '../../shared/schemas/records.js';
import { ResultStore, type ShardFs } from '../../shared/store/result-store.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';
import { resultFor } from './record-fixture.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const SWEEP_TEXT = 'name: fault-test\nmodel: no-op\nseed: 2\nreplicates: 1\nvary:\n  value: { list: [1, 2, 3, 4] }\n';

/**
 * node:fs, except that write call number `failAt` (1-based) writes only the
 * first half of its bytes and the call after it fails with ENOSPC, as a full
 * disk does; later calls succeed again, as when space was freed meanwhile.
 */
function failingFs(failAt: number): ShardFs {
  let calls = 0;
  let failNext = false;
  return {
    mkdirSync: (path, options) => fs.mkdirSync(path, options),
    openSync: (path, flags) => fs.openSync(path, flags),
    fdatasyncSync: (fd) => fs.fdatasyncSync(fd),
    closeSync: (fd) => fs.closeSync(fd),
    writeSync(fd, buffer, offset = 0) {
      calls++;
      if (failNext) {
        failNext = false;
        throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' });
      }
      if (calls === failAt) {
        failNext = true;
        const half = Math.floor((buffer.length - offset) / 2);
        return fs.writeSync(fd, buffer, offset, half);
      }
      return fs.writeSync(fd, buffer, offset);
    },
  };
}

/** A failure record of the sweep's fourth job, as a worker would write it. */
function failureRecord(sweep: LoadedSweep): FailureRecord {
  return {
    v: 1,
    key: resultFor(sweep, 3).key,
    sweepHash: sweep.hash,
    kind: 'exception',
    message: 'x',
    point: { value: 4 },
    replicate: 0,
    writer: 'w',
    run: 'r1',
    at: '2026-01-01T00:00:00.000Z',
    attempt: 1,
  };
}

describe('shard writer after a failed write', () => {
  let root = '';
  let sweep: LoadedSweep;
  beforeEach(async () => {
    root = await mkdtemp(join(tmpdir(), 'rs-shard-fault-'));
    sweep = parseSweepText(SWEEP_TEXT, 'fault.yaml');
  });
  afterEach(async () => {
    await rm(root, { recursive: true, force: true });
  });

  it('refuses every later append, so no record is glued onto the torn line', async () => {
    const store = ResultStore.at(root, 'fault-test');
    await store.prepare(sweep);
    const writer = store.openWriter('host-1-fault1', failingFs(2));
    const file = join(store.resultsDir, 'host-1-fault1.ndjson');
    // Lines are written when a sync asks for them: write call 1 holds record 0, call 2 half of record 1.
    writer.appendResult(resultFor(sweep, 0));
    writer.sync();
    writer.appendResult(resultFor(sweep, 1));

    const failed = (() => {
      try {
        writer.sync();
      } catch (error) {
        return error as Error;
      }
      return undefined;
    })();
    expect(failed?.name).toBe('ShardWriteError');
    expect(failed?.message).toContain(file);
    expect(failed?.message).toContain('ENOSPC');
    expect(failed?.message).not.toContain('\n');

    // The disk works again, but the writer must not append after the torn line, in either shard.
    expect(() => writer.appendResult(resultFor(sweep, 2))).toThrow(
      expect.objectContaining({ name: 'ShardWriteError' }),
    );
    expect(() => writer.appendResult(resultFor(sweep, 2))).toThrow(file);
    expect(() => writer.appendFailure(failureRecord(sweep))).toThrow(
      expect.objectContaining({ name: 'ShardWriteError' }),
    );
    writer.close();

    const text = await readFile(file, 'utf8');
    const lines = text.split('\n');
    // One complete line, then the torn half of the second record with no newline after it.
    expect(lines).toHaveLength(2);
    expect((JSON.parse(lines[0]!) as { key: string }).key).toBe(resultFor(sweep, 0).key);
    expect(lines[1]!.length).toBeGreaterThan(0);
    expect(lines[1]!.match(/"key"/g) ?? []).toHaveLength(1);
    expect(JSON.stringify(resultFor(sweep, 1)).startsWith(lines[1]!)).toBe(true);
    expect(await readdir(store.failuresDir)).toEqual([]);

    // Readers skip the torn line: only the first job counts as done.
    expect([...(await store.completedKeys())]).toEqual([resultFor(sweep, 0).key]);
  });

  it('drops a line still held for the other shard when a write fails, so neither shard grows after the torn line', async () => {
    const store = ResultStore.at(root, 'fault-test');
    await store.prepare(sweep);
    const writer = store.openWriter('host-1-fault2', failingFs(1));
    // Both held until the sync: the results line is written first, tears, and the disk then fails.
    writer.appendFailure(failureRecord(sweep));
    writer.appendResult(resultFor(sweep, 0));
    expect(() => writer.sync()).toThrow(expect.objectContaining({ name: 'ShardWriteError' }));
    writer.close();
    // The failure record was never covered by a sync: it is dropped, not written after the torn line.
    expect(await readdir(store.failuresDir)).toEqual([]);
    expect([...(await store.completedKeys())]).toEqual([]);
  });
});
