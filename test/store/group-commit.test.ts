import * as fs from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { ResultStore } from '../../shared/store/result-store.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { ShardSinks } from '../../worker/shard-sinks.js';
import { nodeShardFs } from '../fixtures/shard-fs.js';
import { useTestModels } from '../fixtures/test-models.js';
import { resultFor } from './record-fixture.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// 200 no-op jobs: 20 replicates of 10 values.
const SWEEP_TEXT =
  'name: gc-test\nmodel: no-op\nseed: 8\nreplicates: 20\nvary:\n  value: { from: 1, to: 10, steps: 10 }\n';
const WRITER = 'host-1-gc';

interface HeldSync {
  /** Complete lines in the shard file when the fdatasync was called, counted by reading the file. */
  readonly linesAtStart: number;
  release(): void;
}

/**
 * node:fs with an fdatasync the test releases by hand, recording how many
 * lines the file held when each one was called and which ones have ended,
 * and the order of syncs and closes.
 */
function gatedFs(file: () => string, failWith?: NodeJS.ErrnoException) {
  const held: HeldSync[] = [];
  const ended: number[] = [];
  const events: string[] = [];
  let onCall: (() => void) | undefined;
  const countLines = (): number => fs.readFileSync(file(), 'utf8').split('\n').length - 1;
  const shardFs = nodeShardFs({
    closeSync: (fd) => {
      events.push('close');
      fs.closeSync(fd);
    },
    fdatasync(fd, done) {
      const linesAtStart = countLines();
      events.push('sync started');
      held.push({
        linesAtStart,
        release: () =>
          fs.fdatasync(fd, (error) => {
            events.push('sync ended');
            if (failWith !== undefined) {
              done(failWith);
              return;
            }
            if (error === null) ended.push(linesAtStart);
            done(error);
          }),
      });
      onCall?.();
    },
  });
  return {
    fs: shardFs,
    held,
    events,
    /** Most lines covered by a sync that has ended. */
    covered: (): number => Math.max(0, ...ended),
    /** Resolves once `count` syncs have been called in all. */
    calls(count: number): Promise<void> {
      if (held.length >= count) return Promise.resolve();
      return new Promise((done) => {
        onCall = () => {
          if (held.length >= count) {
            onCall = undefined;
            done();
          }
        };
      });
    },
  };
}

describe('group commit of result records', () => {
  let root = '';
  let sweep: LoadedSweep;
  let store: ResultStore;
  const shardFile = (): string => join(store.resultsDir, `${WRITER}.ndjson`);

  beforeEach(async () => {
    root = await mkdtemp(join(tmpdir(), 'rs-group-commit-'));
    sweep = parseSweepText(SWEEP_TEXT, 'gc.yaml');
    store = ResultStore.at(root, 'gc-test');
    await store.prepare(sweep);
  });
  afterEach(async () => {
    await rm(root, { recursive: true, force: true });
  });

  it('covers every record written while the previous sync ran with one fdatasync, and acknowledges none before its sync ended', async () => {
    const gate = gatedFs(shardFile);
    const sinks = new ShardSinks({ root, writer: WRITER, durability: 'each-job', fs: gate.fs });
    const writer = sinks.writerFor('gc-test');
    const bursts = 5;
    const perBurst = 40;
    // For each acknowledged record: its line number in the file, and the lines covered by ended syncs at that moment.
    const acks: Array<{ line: number; covered: number }> = [];
    const waits: Array<Promise<void>> = [];
    let line = 0;
    const burst = (): void => {
      for (let i = 0; i < perBurst; i++) {
        writer.appendResult(resultFor(sweep, line));
        const mine = ++line;
        waits.push(sinks.durable('gc-test').then(() => void acks.push({ line: mine, covered: gate.covered() })));
      }
    };

    burst();
    for (let b = 1; b <= bursts; b++) {
      // Sync b is running (held by the test): the next burst arrives meanwhile.
      await gate.calls(b);
      expect(gate.held[b - 1]!.linesAtStart).toBe(b * perBurst);
      if (b < bursts) burst();
      expect(sinks.awaiting).toBe(b < bursts ? 2 * perBurst : perBurst);
      gate.held[b - 1]!.release();
      // Every record of burst b is acknowledged once its sync ends; none of burst b+1.
      await Promise.all(waits.slice(0, b * perBurst));
      expect(acks).toHaveLength(b * perBurst);
    }
    await Promise.all(waits);

    const records = bursts * perBurst;
    // One sync per burst, not one per record.
    expect(gate.held).toHaveLength(bursts);
    expect(gate.held.length).toBeLessThan(records);
    expect(acks).toHaveLength(records);
    for (const ack of acks) expect(ack.covered).toBeGreaterThanOrEqual(ack.line);
    expect(sinks.awaiting).toBe(0);
    sinks.close();
    // Read back with the project's reader: every record, once.
    expect((await store.completedKeys()).size).toBe(records);
  });

  it('shares fdatasync calls between jobs finishing together on the real disk and loses none of their records', async () => {
    let syncs = 0;
    const counting = nodeShardFs({
      fdatasync: (fd, done) => {
        syncs++;
        fs.fdatasync(fd, done);
      },
    });
    const sinks = new ShardSinks({ root, writer: WRITER, durability: 'each-job', fs: counting });
    const writer = sinks.writerFor('gc-test');
    const waits: Array<Promise<void>> = [];
    // 200 jobs finishing in groups of 20, one group per turn of the event loop.
    for (let group = 0; group < 10; group++) {
      for (let i = 0; i < 20; i++) {
        writer.appendResult(resultFor(sweep, group * 20 + i));
        waits.push(sinks.durable('gc-test'));
      }
      await new Promise((turn) => setImmediate(turn));
    }
    await Promise.all(waits);
    expect(syncs).toBeGreaterThanOrEqual(1);
    expect(syncs).toBeLessThan(200);
    sinks.close();
    expect((await store.completedKeys()).size).toBe(200);
  });

  it('fails every job a failed fdatasync should have covered, acknowledges none of them, and appends nothing more', async () => {
    const eio = Object.assign(new Error('EIO: i/o error, fdatasync'), { code: 'EIO' });
    const gate = gatedFs(shardFile, eio);
    const sinks = new ShardSinks({ root, writer: WRITER, durability: 'each-job', fs: gate.fs });
    const writer = sinks.writerFor('gc-test');
    const outcomes: Array<Promise<string>> = [];
    for (let i = 0; i < 3; i++) {
      writer.appendResult(resultFor(sweep, i));
      outcomes.push(
        sinks.durable('gc-test').then(
          () => 'acknowledged',
          (error: Error) => error.name,
        ),
      );
    }
    await gate.calls(1);
    gate.held[0]!.release();
    expect(await Promise.all(outcomes)).toEqual(['ShardWriteError', 'ShardWriteError', 'ShardWriteError']);
    expect(sinks.awaiting).toBe(0);
    // The writer is poisoned, as after a failed write.
    expect(() => writer.appendResult(resultFor(sweep, 3))).toThrow(
      expect.objectContaining({ name: 'ShardWriteError' }),
    );
    sinks.close();
  });

  it('closes a shard whose sync is still running only after that sync ended', async () => {
    const gate = gatedFs(shardFile);
    const sinks = new ShardSinks({ root, writer: WRITER, durability: 'each-job', fs: gate.fs });
    sinks.writerFor('gc-test').appendResult(resultFor(sweep, 0));
    const durable = sinks.durable('gc-test');
    await gate.calls(1);
    sinks.close();
    expect(gate.events).toEqual(['sync started']);
    gate.held[0]!.release();
    await durable;
    expect(gate.events).toEqual(['sync started', 'sync ended', 'close']);
  });
  it('starts a sync no sooner than the minimum gap after the one before, and covers the records of the gap with one sync', async () => {
    const starts: number[] = [];
    const timed = nodeShardFs({
      fdatasync: (fd, done) => {
        starts.push(performance.now());
        fs.fdatasync(fd, done);
      },
    });
    const gapMs = 200;
    const sinks = new ShardSinks({ root, writer: WRITER, durability: 'each-job', fs: timed, minSyncGapMs: gapMs });
    const writer = sinks.writerFor('gc-test');
    writer.appendResult(resultFor(sweep, 0));
    await sinks.durable('gc-test');
    expect(starts).toHaveLength(1);
    // 30 more records over 10 turns of the event loop, well inside the gap on any machine.
    const waits: Array<Promise<void>> = [];
    for (let turn = 0; turn < 10; turn++) {
      for (let i = 0; i < 3; i++) {
        writer.appendResult(resultFor(sweep, 1 + turn * 3 + i));
        waits.push(sinks.durable('gc-test'));
      }
      await new Promise((next) => setImmediate(next));
    }
    expect(sinks.awaiting).toBe(30);
    await Promise.all(waits);
    expect(sinks.awaiting).toBe(0);
    expect(starts).toHaveLength(2);
    // Timers may fire a little early by the clock they are compared with (common practice, no source): 1 ms of slack.
    expect((starts[1] as number) - (starts[0] as number)).toBeGreaterThanOrEqual(gapMs - 1);
    sinks.close();
    expect((await store.completedKeys()).size).toBe(31);
  });
});
