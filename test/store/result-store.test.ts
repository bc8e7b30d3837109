import { existsSync } from 'node:fs';
import { appendFile, copyFile, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import type { FailureRecord, ResultRecord } from '../../shared/schemas/records.js';
import { newWriterId, ResultStore, type StoreWarning } from '../../shared/store/result-store.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';
import { resultFor } from './record-fixture.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const SWEEP_TEXT = 'name: store-test\nmodel: no-op\nseed: 2\nreplicates: 2\nvary:\n  value: { list: [1, 2, 3] }\n';

async function collect(store: ResultStore, warnings: StoreWarning[] = []): Promise<ResultRecord[]> {
  const out: ResultRecord[] = [];
  for await (const r of store.records({ onWarning: (w) => warnings.push(w) })) out.push(r);
  return out;
}

describe('result store', () => {
  let root = '';
  let sweep: LoadedSweep;
  beforeEach(async () => {
    root = await mkdtemp(join(tmpdir(), 'rs-store-'));
    sweep = parseSweepText(SWEEP_TEXT, 'store.yaml');
  });
  afterEach(async () => {
    await rm(root, { recursive: true, force: true });
  });

  it('creates the folder and a sweep.json that reads back with the same hash', async () => {
    const store = ResultStore.at(root, sweep.spec.name);
    await store.prepare(sweep);
    expect((await readdir(store.dir)).sort()).toEqual(['failures', 'results', 'sweep.json']);
    const json = JSON.parse(await readFile(join(store.dir, 'sweep.json'), 'utf8')) as Record<string, unknown>;
    expect(Object.keys(json)).toEqual(['format', 'hash', 'codeVersion', 'createdAt', 'source', 'sweep']);
    expect(json['format']).toBe('recallscape-sweep/1');
    expect(json['hash']).toBe(sweep.hash);
    expect(json['source']).toBe('store.yaml');
    expect(Object.keys(json['sweep'] as object)).toEqual([
      'name',
      'model',
      'seed',
      'replicates',
      'fixed',
      'vary',
      'derived',
      'sampler',
      'report',
    ]);
    const back = await ResultStore.open(store.dir).readSweep();
    expect(back.hash).toBe(sweep.hash);
    expect(back.spec).toEqual(sweep.spec);
    expect(back.codeVersion).toBe(JSON.parse(await readFile('package.json', 'utf8')).version);
    expect(Number.isNaN(Date.parse(back.createdAt))).toBe(false);
    // Preparing again with the same sweep is fine and keeps the file.
    const before = await readFile(join(store.dir, 'sweep.json'), 'utf8');
    await store.prepare(sweep);
    expect(await readFile(join(store.dir, 'sweep.json'), 'utf8')).toBe(before);
  });

  it('refuses a folder that holds another sweep, says how to proceed, and creates nothing', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const changed = parseSweepText(SWEEP_TEXT.replace('seed: 2', 'seed: 3'), 'store.yaml');
    const error = await store.prepare(changed).then(
      () => undefined,
      (e: unknown) => e as Error,
    );
    expect(error?.name).toBe('SweepMismatchError');
    expect(error?.message).toContain('--out');
    expect(error?.message).toContain('new name');
    expect(error?.message).toContain(`delete ${store.dir}`);
    expect(JSON.parse(await readFile(join(store.dir, 'sweep.json'), 'utf8')).hash).toBe(sweep.hash);
    expect((await readdir(store.dir)).sort()).toEqual(['failures', 'results', 'sweep.json']);
  });

  it('stores an edited report section on a re-run and keeps hash, createdAt, codeVersion and source', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const file = join(store.dir, 'sweep.json');
    const before = JSON.parse(await readFile(file, 'utf8')) as Record<string, unknown> & {
      sweep: Record<string, unknown>;
    };
    expect(before.sweep['report']).toEqual({});
    const edited = parseSweepText(`${SWEEP_TEXT}report: { x: value, bins: 7 }\n`, 'store.yaml');
    expect(edited.hash).toBe(sweep.hash);
    await store.prepare(edited);
    const after = JSON.parse(await readFile(file, 'utf8')) as Record<string, unknown> & {
      sweep: Record<string, unknown>;
    };
    expect(after.sweep['report']).toEqual({ x: 'value', bins: 7 });
    expect(Object.keys(after)).toEqual(['format', 'hash', 'codeVersion', 'createdAt', 'source', 'sweep']);
    for (const field of ['format', 'hash', 'codeVersion', 'createdAt', 'source'])
      expect(after[field]).toEqual(before[field]);
    expect(Object.keys(after.sweep)).toEqual(Object.keys(before.sweep));
    expect({ ...after.sweep, report: {} }).toEqual(before.sweep);
    // Read back through the store (as `recallscape report` does), and no temporary file is left.
    const back = await ResultStore.open(store.dir).readSweep();
    expect(back.spec.report).toEqual({ x: 'value', bins: 7 });
    expect((await readdir(store.dir)).sort()).toEqual(['failures', 'results', 'sweep.json']);
  });

  it('refuses a results root that is a file, as an input error', async () => {
    await writeFile(join(root, 'plain-file'), 'x');
    const store = ResultStore.at(join(root, 'plain-file'), 'store-test');
    await expect(store.prepare(sweep)).rejects.toThrow(/cannot create the sweep folder .* choose another --out/);
  });

  it('refuses a sweep.json whose sweep no longer matches its hash', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const file = join(store.dir, 'sweep.json');
    const json = JSON.parse(await readFile(file, 'utf8')) as { sweep: { seed: number } };
    json.sweep.seed = 99;
    await writeFile(file, JSON.stringify(json));
    const error = await store.readSweep().then(
      () => undefined,
      (e: unknown) => e as Error,
    );
    expect(error).toBeInstanceOf(InputError);
    expect(error?.message).toContain('does not match');
    expect(error?.message).toContain('new folder');
  });

  it('reports a missing sweep.json as an input error', async () => {
    const store = ResultStore.open(join(root, 'nothing-here'));
    await expect(store.readSweep()).rejects.toBeInstanceOf(InputError);
    await expect(store.completedKeys()).rejects.toThrow(/no sweep.json/);
    expect(existsSync(join(root, 'nothing-here'))).toBe(false);
  });

  it('writes records, one line each, and reads them back deduplicated', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const writer = store.openWriter('host-1-abc123');
    for (let i = 0; i < 6; i++) writer.appendResult(resultFor(sweep, i));
    writer.appendResult(resultFor(sweep, 0, { writer: 'other', run: 'r2', elapsedMs: 9 })); // identical job outcome
    writer.sync();
    writer.close();
    const text = await readFile(join(store.resultsDir, 'host-1-abc123.ndjson'), 'utf8');
    expect(text.split('\n')).toHaveLength(8); // 7 lines + empty after the last newline
    const warnings: StoreWarning[] = [];
    const records = await collect(store, warnings);
    expect(records).toHaveLength(6);
    expect(warnings).toEqual([]);
    const planned = [...expandJobs(sweep)].map((j) => j.key);
    expect([...(await store.completedKeys())].sort()).toEqual([...planned].sort());
  });

  it('reports a second, different record for one key as a conflict and keeps the first', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const writer = store.openWriter('a-1-aaaaaa');
    writer.appendResult(resultFor(sweep, 0));
    writer.appendResult(resultFor(sweep, 0, { metrics: { success: false, value: 1 } }));
    writer.close();
    const warnings: StoreWarning[] = [];
    const records = await collect(store, warnings);
    expect(records).toHaveLength(1);
    expect(records[0]!.metrics.success).toBe(true);
    expect(warnings.map((w) => [w.kind, w.line])).toEqual([['conflict', 2]]);
    expect(warnings[0]!.message).toContain(records[0]!.key);
  });

  it('warns about a torn last line, ignores it, and leaves its job missing', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const writer = store.openWriter('a-1-aaaaaa');
    writer.appendResult(resultFor(sweep, 0));
    writer.appendResult(resultFor(sweep, 1));
    writer.close();
    const shard = join(store.resultsDir, 'a-1-aaaaaa.ndjson');
    const torn = JSON.stringify(resultFor(sweep, 2));
    await appendFile(shard, torn.slice(0, torn.length - 15));
    const warnings: StoreWarning[] = [];
    const keys = await store.completedKeys({ onWarning: (w) => warnings.push(w) });
    expect(keys.size).toBe(2);
    expect(keys.has(resultFor(sweep, 2).key)).toBe(false);
    expect(warnings.map((w) => [w.kind, w.file, w.line])).toEqual([['torn-line', shard, 3]]);
  });

  it('warns about a malformed line in the middle and still reads the lines after it', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const shard = join(store.resultsDir, 'hand-made.ndjson');
    await writeFile(
      shard,
      [
        JSON.stringify(resultFor(sweep, 0)),
        '{"v":1,"key":"nonsense"}',
        'garbage{',
        JSON.stringify(resultFor(sweep, 1)),
        '',
      ].join('\n'),
    );
    const warnings: StoreWarning[] = [];
    const records = await collect(store, warnings);
    expect(records.map((r) => r.key)).toEqual([resultFor(sweep, 0).key, resultFor(sweep, 1).key]);
    expect(warnings.map((w) => [w.kind, w.line])).toEqual([
      ['bad-line', 2],
      ['bad-line', 3],
    ]);
  });

  it('ignores records of another sweep with one foreign warning per file', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const writer = store.openWriter('a-1-aaaaaa');
    writer.appendResult(resultFor(sweep, 0));
    writer.appendResult(resultFor(sweep, 1, { sweepHash: 'f'.repeat(64) }));
    writer.appendResult(resultFor(sweep, 2, { sweepHash: 'f'.repeat(64) }));
    writer.close();
    const warnings: StoreWarning[] = [];
    const records = await collect(store, warnings);
    expect(records).toHaveLength(1);
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatchObject({ kind: 'foreign', line: 2 });
    expect(warnings[0]!.message).toContain('2 record(s) of another sweep');
  });

  it('merges shards from two machines by copying files', async () => {
    const machineA = ResultStore.at(join(root, 'a'), 'store-test');
    const machineB = ResultStore.at(join(root, 'b'), 'store-test');
    await machineA.prepare(sweep);
    await machineB.prepare(sweep);
    const wa = machineA.openWriter(newWriterId('alpha'));
    const wb = machineB.openWriter(newWriterId('beta'));
    for (const i of [0, 1, 2, 3]) wa.appendResult(resultFor(sweep, i, { writer: wa.writer }));
    for (const i of [2, 3, 4, 5]) wb.appendResult(resultFor(sweep, i, { writer: wb.writer }));
    wa.close();
    wb.close();
    for (const name of await readdir(machineB.resultsDir))
      await copyFile(join(machineB.resultsDir, name), join(machineA.resultsDir, name));
    const warnings: StoreWarning[] = [];
    const keys = await machineA.completedKeys({ onWarning: (w) => warnings.push(w) });
    expect(warnings).toEqual([]);
    expect([...keys].sort()).toEqual([...expandJobs(sweep)].map((j) => j.key).sort());
    expect(await readdir(machineA.resultsDir)).toHaveLength(2);
  });

  it('writes and reads back failures, every attempt kept', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const writer = store.openWriter('a-1-aaaaaa');
    const job = [...expandJobs(sweep)][3]!;
    const failure = (attempt: number): FailureRecord => ({
      v: 1,
      key: job.key,
      sweepHash: sweep.hash,
      kind: 'exception',
      message: `boom ${attempt}`,
      point: job.point,
      replicate: job.replicate,
      writer: writer.writer,
      run: 'r1',
      at: '2026-01-01T00:00:00.000Z',
      attempt,
    });
    writer.appendFailure(failure(1));
    writer.appendFailure(failure(2));
    writer.close();
    const back: FailureRecord[] = [];
    for await (const f of store.failures()) back.push(f);
    expect(back).toEqual([failure(1), failure(2)]);
    expect(existsSync(join(store.resultsDir, 'a-1-aaaaaa.ndjson'))).toBe(false);
  });

  it('refuses to write a malformed record', async () => {
    const store = ResultStore.at(root, 'store-test');
    await store.prepare(sweep);
    const writer = store.openWriter('a-1-aaaaaa');
    expect(() => writer.appendResult({ ...resultFor(sweep, 0), key: 'short' })).toThrow(/malformed result record/);
    writer.close();
    expect(await readdir(store.resultsDir)).toEqual([]);
  });

  it('makes writer ids that are unique and safe as file names', async () => {
    const ids = new Set(Array.from({ length: 50 }, () => newWriterId()));
    expect(ids.size).toBe(50);
    for (const id of ids) expect(id).toMatch(new RegExp(`^[a-z0-9][a-z0-9._-]*-${process.pid}-[a-z0-9]{6}$`));
    expect(newWriterId('Lab PC/3..x')).toMatch(new RegExp(`^lab-pc-3.x-${process.pid}-[a-z0-9]{6}$`));
    const store = ResultStore.at(root, 'store-test');
    expect(() => store.openWriter('../escape')).toThrow(/writer id/);
  });
});
