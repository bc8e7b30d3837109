import { describe, expect, it } from 'vitest';
import { aggregateRecords } from '../../coordinator/summarize/aggregate.js';
import { binAxis, locate } from '../../coordinator/summarize/axis.js';
import { binEdges, binIndex } from '../../coordinator/summarize/binning.js';
import { GroupSummary } from '../../coordinator/summarize/group-summary.js';
import { buildTable, toCsv } from '../../coordinator/summarize/tables.js';
import type { ResultRecord } from '../../shared/schemas/records.js';

let counter = 0;
function record(point: Record<string, number | string>, metrics: Record<string, unknown>): ResultRecord {
  counter += 1;
  return {
    v: 1,
    key: counter.toString(16).padStart(32, '0'),
    sweepHash: 'f'.repeat(64),
    model: 'hand-made',
    modelVersion: '1',
    replicate: counter,
    seed: counter,
    point,
    metrics: metrics as ResultRecord['metrics'],
    writer: 'test',
    run: 'r1',
    finishedAt: '2026-01-01T00:00:00.000Z',
    elapsedMs: 1,
  };
}

describe('aggregateRecords', () => {
  it('counts trials and successes, and gives mean and sample sd of the other metrics per point', async () => {
    const records = [
      record({ a: 1 }, { success: true, dwell: 1, stable: true }),
      record({ a: 1 }, { success: false, dwell: 2, stable: false }),
      record({ a: 1 }, { success: true, dwell: 3, stable: true }),
      record({ a: 1 }, { success: true, dwell: 4, stable: true }),
      record({ a: 2 }, { success: false, dwell: 10, firstError: null, perSequence: [1, 2] }),
      record({ a: 2 }, { success: false, dwell: 20, firstError: 3, perSequence: [0, 2] }),
    ];
    const result = await aggregateRecords(records, (r) => String(r.point['a']));
    expect(result.records).toBe(6);
    const one = result.groups.get('1');
    const two = result.groups.get('2');
    expect(one?.n).toBe(4);
    expect(one?.successes).toBe(3);
    // mean of [1,2,3,4] = 2.5; sample sd = sqrt(5/3) = 1.2910 (common practice, no source)
    expect(one?.metrics.get('dwell')?.mean).toBeCloseTo(2.5, 12);
    expect(one?.metrics.get('dwell')?.sd()).toBeCloseTo(1.290994, 6);
    // A boolean metric is a rate: 3 of 4.
    expect(one?.metrics.get('stable')?.mean).toBeCloseTo(0.75, 12);
    expect(two?.n).toBe(2);
    expect(two?.successes).toBe(0);
    // mean of [10, 20] = 15, sd = sqrt(50) = 7.0711 (worked by hand)
    expect(two?.metrics.get('dwell')?.sd()).toBeCloseTo(7.071068, 6);
    // null is "not applicable": only the one number counts; arrays are not summarised.
    expect(two?.metrics.get('firstError')?.count).toBe(1);
    expect(two?.metrics.get('firstError')?.sd()).toBeNull();
    expect(two?.metrics.has('perSequence')).toBe(false);
    expect(result.metricKinds.get('stable')).toBe('boolean');
    expect(result.metricKinds.get('dwell')).toBe('number');
  });

  it('pools groups with the same result as summarising their records together', async () => {
    const values = [0.5, 1.5, 7, 2, 9, 4.25, 3];
    const all = await aggregateRecords(
      values.map((v) => record({ a: 0 }, { success: v > 2, x: v })),
      () => 'all',
    );
    const split = await aggregateRecords(
      values.map((v, i) => record({ a: i % 2 }, { success: v > 2, x: v })),
      (r) => String(r.point['a']),
    );
    const pooled = split.groups.get('0');
    const other = split.groups.get('1');
    if (pooled === undefined || other === undefined) throw new Error('missing groups');
    pooled.merge(other);
    const whole = all.groups.get('all');
    expect(pooled.n).toBe(whole?.n);
    expect(pooled.successes).toBe(whole?.successes);
    expect(pooled.metrics.get('x')?.mean).toBeCloseTo(whole?.metrics.get('x')?.mean ?? NaN, 12);
    expect(pooled.metrics.get('x')?.sd()).toBeCloseTo(whole?.metrics.get('x')?.sd() ?? NaN, 12);
  });

  it('writes a CSV with one row per point, plain numbers and the Wilson interval', async () => {
    const records = [
      ...Array.from({ length: 81 }, () => record({ a: 1 }, { success: true, dwell: 2 })),
      ...Array.from({ length: 182 }, () => record({ a: 1 }, { success: false, dwell: 2 })),
      record({ a: 2 }, { success: true, dwell: 5 }),
    ];
    const result = await aggregateRecords(records, (r) => String(r.point['a']));
    const rows = [1, 2, 3].map((a) => ({
      values: { a },
      planned: 263,
      summary: result.groups.get(String(a)) ?? new GroupSummary(),
    }));
    const csv = toCsv(buildTable([{ name: 'a', label: 'a' }], rows, result.metricKinds))
      .trimEnd()
      .split('\n');
    expect(csv[0]).toBe(
      'a,n,planned,successes,success_rate,success_lo,success_hi,dwell_mean,dwell_sd,success_job,failure_job',
    );
    expect(csv.length).toBe(4);
    const first = (csv[1] ?? '').split(',').map(Number);
    expect(first.slice(0, 4)).toEqual([1, 263, 263, 81]);
    // 81/263: 0.2553 to 0.3662 (Newcombe 1998)
    expect(first[5]?.toFixed(4)).toBe('0.2553');
    expect(first[6]?.toFixed(4)).toBe('0.3662');
    expect(first[8]).toBe(0);
    // A point without records: zero counts and empty fields (NA for pandas and R).
    expect(csv[3]).toBe('3,0,263,0,,,,,,,');
  });
});

describe('binning', () => {
  it('cuts a linear range into equal bins whose edges include both ends', () => {
    expect(binEdges(0, 1, 4, false)).toEqual([0, 0.25, 0.5, 0.75, 1]);
  });

  it('cuts a log range into bins of equal ratio', () => {
    const edges = binEdges(1, 1000, 3, true);
    // 10^0, 10^1, 10^2, 10^3 (worked by hand)
    expect(edges[0]).toBe(1);
    expect(edges[1]).toBeCloseTo(10, 9);
    expect(edges[2]).toBeCloseTo(100, 9);
    expect(edges[3]).toBe(1000);
  });

  it('puts random points into the bin whose edges hold them, the top end into the last bin', () => {
    const edges = binEdges(20, 200, 8, false);
    const points = [20, 20.01, 42.4, 42.5, 42.6, 109.99, 110, 199.9, 200];
    // Bin width 22.5 (worked by hand): [20,42.5) [42.5,65) ... [177.5,200]
    expect(points.map((p) => binIndex(edges, false, p))).toEqual([0, 0, 0, 1, 1, 3, 4, 7, 7]);
    expect(binIndex(edges, false, 19.99)).toBe(-1);
    expect(binIndex(edges, false, 200.01)).toBe(-1);
    for (let k = 0; k < 200; k++) {
      const v = 20 + ((k * 0.6180339887) % 1) * 180;
      const i = binIndex(edges, false, v);
      expect(v).toBeGreaterThanOrEqual(edges[i] ?? NaN);
      expect(v).toBeLessThanOrEqual(edges[i + 1] ?? NaN);
    }
  });

  it('bins a log-scaled axis in log space', () => {
    const axis = binAxis('tauZPre', 10, 1000, 2, true);
    expect(axis.edges[1]).toBeCloseTo(100, 9);
    expect(locate(axis, 99)).toBe(0);
    expect(locate(axis, 101)).toBe(1);
  });
});
