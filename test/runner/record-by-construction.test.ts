import { describe, expect, it } from 'vitest';
import { MetricsSchema } from '../../shared/model.js';
import { JobPayloadSchema, ResultRecordSchema } from '../../shared/schemas/records.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { runJob, succeeded } from '../../worker/run-job.js';
import { testPayload } from '../fixtures/test-payload.js';

// The main thread writes a pool thread's result record without checking it
// again (ShardWriter.appendCheckedResult), because run-job.ts builds it only
// from a payload that passed JobPayloadSchema and metrics that passed
// MetricsSchema. These tests hold that claim against the record schema at the
// edges of both input schemas. Source: the project's own record format
// (shared/schemas/records.ts); common practice, no source, for the approach.

const sweep = { name: 'edges', hash: 'ab'.repeat(32), rootSeed: 7 };
const context = { writer: 'host-1-a1b2c3', run: 'f00dfeed0001' };

/** Payloads at the edges of JobPayloadSchema, each checked by it first. */
function edgePayloads() {
  const base = testPayload(sweep, 'no-op', { value: 1 }, 0);
  const raw = [
    base,
    { ...testPayload(sweep, 'no-op', { value: -0.5 }, 1_000_000), point: { value: -0.5 } },
    { ...base, model: 'm'.repeat(100), modelVersion: 'v'.repeat(50), point: { a: 'text', b: true, c: 1e308 } },
    { ...base, seed: Number.MAX_SAFE_INTEGER, rootSeed: 0, timeoutMs: 1 },
    { ...base, point: {} },
  ];
  return raw.map((p) => JobPayloadSchema.parse(p));
}

/** Metrics at the edges of MetricsSchema, each checked by it first. */
const edgeMetrics = [
  { success: true },
  { success: false, value: 0, missing: null, flag: false, perSequence: [1, null, 0.5], empty: [] },
  { success: true, big: Number.MAX_VALUE, tiny: -Number.MIN_VALUE },
].map((m) => MetricsSchema.parse(m));

describe('a result record built from checked parts', () => {
  it('passes the record schema for every edge payload, metrics set and run time', () => {
    let checked = 0;
    for (const payload of edgePayloads()) {
      for (const metrics of edgeMetrics) {
        for (const elapsedMs of [0, 1e-9, 0.0004, 12.3456789, 3.6e6]) {
          const outcome = succeeded(payload, { output: { metrics }, metrics, elapsedMs }, context);
          expect(outcome.ok).toBe(true);
          if (!outcome.ok) continue;
          const parsed = ResultRecordSchema.safeParse(outcome.record);
          expect(parsed.success, JSON.stringify(parsed.error?.issues)).toBe(true);
          // Written as JSON and read back, it is the same record.
          expect(JSON.parse(JSON.stringify(outcome.record))).toEqual(outcome.record);
          checked++;
        }
      }
    }
    expect(checked).toBe(5 * 3 * 5);
  });

  it('comes out of real runs of the built-in model and passes the record schema', () => {
    const small = parseSweepText(
      'name: edges-real\nmodel: bcpnn-sequences\nseed: 5\nreplicates: 2\nfixed: { hypercolumns: 4, minicolumns: 4, sequenceLength: 3, sequenceCount: 1 }\nvary:\n  noise: { list: [0, 0.5] }\n',
      'edges (test)',
    );
    const outcomes = [...expandJobs(small)].map((job) => runJob(toPayload(small, job), context));
    expect(outcomes).toHaveLength(4);
    for (const outcome of outcomes) {
      expect(outcome.ok).toBe(true);
      if (outcome.ok) expect(ResultRecordSchema.safeParse(outcome.record).success).toBe(true);
    }
  });
});
