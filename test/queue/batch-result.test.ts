import { createHash } from 'node:crypto';
import { brotliCompressSync, deflateRawSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { MAX_RESULT_BODY_CHARS, packResults, unpackResults } from '../../shared/queue/batch-result.js';
import { toColumns } from '../../shared/queue/record-columns.js';
import { ResultRecordSchema } from '../../shared/schemas/records.js';

// Every expected value below is the input itself (JSON.stringify of each record as it went in), or a
// value packed in this file with node:zlib directly, not by the code under test.

const HASH = '74384109250895b698e0baef8b48d7b18c48cf520b4756caca67f24c930a3e77';

/** Records as a worker writes them, by hand; the third lacks two optional metrics, the fourth has a null. */
const HAND_RECORDS = [
  {
    v: 1,
    key: '2e3a382bbdc5ac5b011258a06c542551',
    sweepHash: HASH,
    model: 'bcpnn-sequences',
    modelVersion: '1.1.0',
    replicate: 0,
    seed: 4450833814075585,
    point: { patternOverlap: 0, overlapLength: 0, tauZPre: 50 },
    metrics: {
      success: true,
      recalledFraction: 1,
      meanDwellMs: 174.75,
      achievedOverlap: null,
      correctPrefix: [6, 6],
      firstError: [null, null],
    },
    writer: 'vm-13816-7x82js',
    run: 'cd83476659d7',
    finishedAt: '2026-12-02T11:59:04.657Z',
    elapsedMs: 127.706,
  },
  {
    v: 1,
    key: 'd2638b51b24a67598310605f29748202',
    sweepHash: HASH,
    model: 'bcpnn-sequences',
    modelVersion: '1.1.0',
    replicate: 1,
    seed: 8332185548710025,
    point: { patternOverlap: 0, overlapLength: 0, tauZPre: 50 },
    metrics: {
      success: false,
      recalledFraction: 0.5,
      meanDwellMs: -0.125,
      achievedOverlap: 0.25,
      correctPrefix: [3, 6],
      firstError: [3, null],
    },
    writer: 'vm-13816-7x82js',
    run: 'cd83476659d7',
    finishedAt: '2026-12-02T11:59:04.721Z',
    elapsedMs: 147.226,
  },
  {
    v: 1,
    key: 'c1585dc9e43c345099c730daced7b1a9',
    sweepHash: HASH,
    model: 'bcpnn-sequences',
    modelVersion: '1.1.0',
    replicate: 0,
    seed: 151957039779586,
    point: { patternOverlap: 0.1, overlapLength: 2, tauZPre: 75 },
    metrics: { success: true, recalledFraction: 1, correctPrefix: [6, 6], firstError: [null, null] },
    writer: 'vm-13816-7x82js',
    run: 'cd83476659d7',
    finishedAt: '2026-12-02T11:59:04.752Z',
    elapsedMs: 66.092,
  },
  {
    v: 1,
    key: '0f00000000000000000000000000000a',
    sweepHash: HASH,
    model: 'bcpnn-sequences',
    modelVersion: '1.1.0',
    replicate: 1,
    seed: 0,
    point: { patternOverlap: 0.1, overlapLength: 2, tauZPre: 75 },
    metrics: {
      success: true,
      recalledFraction: 1,
      meanDwellMs: 1e-7,
      achievedOverlap: null,
      correctPrefix: [],
      firstError: [null, 1],
    },
    writer: 'vm-13816-7x82js',
    run: 'cd83476659d7',
    finishedAt: '2026-12-02T11:59:04.813Z',
    elapsedMs: 0,
  },
];

function jsonLines(records: readonly unknown[]): string[] {
  return records.map((r) => JSON.stringify(r));
}

function roundTrip(records: readonly unknown[]): unknown[] | undefined {
  // Through JSON, as the value travels through Redis.
  return unpackResults(JSON.parse(JSON.stringify(packResults(records))));
}

/** A version-2 value around a hand-made table, packed with node:zlib directly. */
function v2Value(table: unknown, records: number) {
  const text = typeof table === 'string' ? table : JSON.stringify(table);
  return { v: 2, records, packed: brotliCompressSync(Buffer.from(text)).toString('base64') };
}

/** A table of object columns nested `depth` deep, as JSON text (JSON.stringify would overflow the stack). */
function nestedTable(depth: number): string {
  return `${'{"k":["x"],"o":['.repeat(depth)}{"c":1}${']}'.repeat(depth)}`;
}

/** A version-1 value as earlier workers wrote it: NDJSON lines, raw deflate, base64. */
function v1Value(records: readonly unknown[]) {
  return {
    v: 1,
    records: records.length,
    packed: deflateRawSync(Buffer.from(jsonLines(records).join('\n'))).toString('base64'),
  };
}

function hex(text: string, algorithm = 'md5'): string {
  return createHash(algorithm).update(text).digest('hex');
}

/** 300 records of one batch that differ only in key, seed, finish time, elapsed time and one metric. */
function batchOf300() {
  const start = Date.parse('2026-12-02T11:59:04.000Z');
  let at = start;
  return Array.from({ length: 300 }, (_, i) => {
    const noise = hex(`trial ${i}`, 'sha256');
    at += 1 + (Number.parseInt(noise.slice(0, 2), 16) % 60);
    return {
      v: 1,
      key: hex(`key ${i}`),
      sweepHash: HASH,
      model: 'bcpnn-sequences',
      modelVersion: '1.1.0',
      replicate: 0,
      seed: Number.parseInt(noise.slice(2, 15), 16),
      point: { patternOverlap: 0, overlapLength: 0, tauZPre: 50 },
      metrics: {
        success: true,
        recalledFraction: 1,
        meanDwellMs: Number.parseInt(noise.slice(15, 20), 16) / 1000,
        correctPrefix: [6, 6],
      },
      writer: 'vm-13816-7x82js',
      run: 'cd83476659d7',
      finishedAt: new Date(at).toISOString(),
      elapsedMs: Number.parseInt(noise.slice(20, 25), 16) / 1000,
    };
  });
}

describe('packing a batch of result records', () => {
  it('gives back realistic records with the same JSON, key order included', () => {
    for (const record of HAND_RECORDS) ResultRecordSchema.parse(record);
    expect(jsonLines(roundTrip(HAND_RECORDS)!)).toEqual(jsonLines(HAND_RECORDS));
  });

  it('writes version 2 and stores a field equal in every record once', () => {
    const packed = packResults(HAND_RECORDS);
    expect(packed.v).toBe(2);
    expect(packed.records).toBe(4);
    const columns = toColumns(HAND_RECORDS) as { k: string[]; o: unknown[] };
    expect(columns.k).toEqual(Object.keys(HAND_RECORDS[0]!));
    expect(columns.o[columns.k.indexOf('sweepHash')]).toEqual({ c: HASH });
    // Metrics differ in key sets between records: one value per record, as they are.
    expect(columns.o[columns.k.indexOf('metrics')]).toEqual({ a: HAND_RECORDS.map((r) => r.metrics) });
    // Points share their keys: one column per parameter.
    expect(columns.o[columns.k.indexOf('point')]).toEqual({
      k: ['patternOverlap', 'overlapLength', 'tauZPre'],
      o: [{ a: [0, 0, 0.1, 0.1] }, { a: [0, 0, 2, 2] }, { a: [50, 50, 75, 75] }],
    });
  });

  it('gives back irregular batches: different key sets and orders, mixed types, one record, none', () => {
    const irregular = [
      { key: 'a', seed: 1, extra: { x: 1, y: [1, 2] } },
      { seed: 2, key: 'b', extra: { y: [1, 2], x: 1 } },
      { key: 'c', seed: 3 },
      { key: 'd', seed: 'four', extra: null, skipped: undefined },
    ];
    expect(jsonLines(roundTrip(irregular)!)).toEqual(jsonLines(irregular));
    // Same keys at the top, irregular below: nested orders, mixed types, absent-in-JSON values, an own __proto__ key.
    const nested = [
      { key: 'a', m: { x: 1, y: 2 }, t: 1, u: [1], p: JSON.parse('{"__proto__":1,"q":2}') },
      { key: 'b', m: { y: 2, x: 1 }, t: 'one', u: [1], p: JSON.parse('{"__proto__":1,"q":3}') },
      { key: 'c', m: { x: 1, y: undefined }, t: null, u: [1], p: JSON.parse('{"__proto__":1,"q":4}') },
      { key: 'd', m: { x: Number.NaN, y: -0 }, t: true, u: [1], p: JSON.parse('{"__proto__":1,"q":5}') },
    ];
    const back = roundTrip(nested)!;
    expect(jsonLines(back)).toEqual(jsonLines(nested));
    expect(Object.getPrototypeOf((back[0] as { p: object }).p)).toBe(Object.prototype);
    // Deeper than the columns go (32 levels): the rest is kept as plain values.
    const deep = [0, 1].map((i) => {
      let value: unknown = { leaf: i };
      for (let depth = 0; depth < 40; depth++) value = { down: value };
      return { key: `k${i}`, value };
    });
    expect(jsonLines(roundTrip(deep)!)).toEqual(jsonLines(deep));
    expect(jsonLines(roundTrip([HAND_RECORDS[2]])!)).toEqual(jsonLines([HAND_RECORDS[2]]));
    expect(roundTrip([])).toEqual([]);
  });

  it('gives each record its own copy of a value stored once', () => {
    const back = roundTrip([{ a: [1, 2] }, { a: [1, 2] }]) as { a: number[] }[];
    expect(back).toEqual([{ a: [1, 2] }, { a: [1, 2] }]);
    expect(back[0]!.a).not.toBe(back[1]!.a);
  });

  it('still unpacks a version-1 value written by an earlier worker', () => {
    expect(jsonLines(unpackResults(v1Value(HAND_RECORDS))!)).toEqual(jsonLines(HAND_RECORDS));
    expect(unpackResults({ ...v1Value(HAND_RECORDS), records: 5 })).toBeUndefined();
  });

  it('returns undefined for hostile values, without throwing', () => {
    const good = packResults(HAND_RECORDS);
    expect(unpackResults({ ...good, packed: 'not base64 at all!' })).toBeUndefined();
    expect(unpackResults({ ...good, packed: 'AAAAAAAA' })).toBeUndefined();
    expect(unpackResults({ ...good, records: 5 })).toBeUndefined();
    expect(unpackResults({ ...good, records: 3 })).toBeUndefined();
    expect(unpackResults({ ...good, extra: 1 })).toBeUndefined();
    expect(unpackResults({ ...good, v: 3 })).toBeUndefined();
    // A bomb: 1 MB packed that inflates past the bound.
    const bomb = brotliCompressSync(Buffer.alloc(MAX_RESULT_BODY_CHARS + 1024, ' ')).toString('base64');
    expect(unpackResults({ v: 2, records: 1, packed: bomb })).toBeUndefined();
    // A small table whose value stored once would unfold into 1,000 x 100,000 characters.
    expect(unpackResults(v2Value({ c: 'x'.repeat(100_000) }, 1_000))).toBeUndefined();
    expect(unpackResults(v2Value({ k: ['x'.repeat(100_000)], o: [{ c: 1 }] }, 1_000))).toBeUndefined();
    // Columns of unequal length, and other malformed tables.
    expect(unpackResults(v2Value({ k: ['key', 'seed'], o: [{ a: ['x', 'y'] }, { a: [1] }] }, 2))).toBeUndefined();
    expect(unpackResults(v2Value({ k: ['key', 'seed'], o: [{ a: ['x', 'y'] }] }, 2))).toBeUndefined();
    expect(unpackResults(v2Value({ k: ['key', 'key'], o: [{ c: 1 }, { c: 2 }] }, 2))).toBeUndefined();
    expect(unpackResults(v2Value({ k: [1], o: [{ c: 1 }] }, 2))).toBeUndefined();
    expect(unpackResults(v2Value({ a: ['x'], c: 1 }, 1))).toBeUndefined();
    expect(unpackResults(v2Value([['x']], 1))).toBeUndefined();
    // Nested deeper than any record (the encoder stops at 32 levels), and deeper than the stack.
    expect(unpackResults(v2Value(nestedTable(2), 1))).toEqual([{ x: { x: 1 } }]);
    expect(unpackResults(v2Value(nestedTable(40), 1))).toBeUndefined();
    expect(unpackResults(v2Value(nestedTable(1_000_000), 1))).toBeUndefined();
    const notJson = brotliCompressSync(Buffer.from('{"a": [')).toString('base64');
    expect(unpackResults({ v: 2, records: 1, packed: notJson })).toBeUndefined();
  });

  it('packs 300 records of one batch in clearly fewer bytes than version 1', () => {
    const records = batchOf300();
    const back = roundTrip(records)!;
    expect(jsonLines(back)).toEqual(jsonLines(records));
    const v1 = v1Value(records).packed.length;
    const v2 = packResults(records).packed.length;
    // Observed (Node 20.20): v1 62.9 bytes a record, v2 52.6 (ratio 0.84). What is left is mostly entropy: a
    // random 128-bit key, a 52-bit seed and two 20-bit fields are 28 bytes, 37.6 in base64, in either version.
    expect(v2).toBeLessThan(0.9 * v1);
    expect(v1 - v2).toBeGreaterThan(8 * 300);
  });
});
