import { describe, expect, it } from 'vitest';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import type { JobPayload } from '../../shared/schemas/records.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { runJob } from '../../worker/run-job.js';

// A worker accepts a job only when its key, seed and point are what the payload's content gives (issue 9, item 2).

const CONTEXT = { writer: 'identity-test', run: 'r1' };
const bcpnn = parseSweepText(
  'name: identity\nmodel: bcpnn-sequences\nseed: 11\nreplicates: 2\nvary:\n  patternOverlap: { list: [0, 0.5] }\n',
  'inline',
);
const jobs = [...expandJobs(bcpnn)];

function payloadOf(index: number): JobPayload {
  const job = jobs[index];
  if (job === undefined) throw new Error(`no job ${index}`);
  return toPayload(bcpnn, job);
}

function refusal(payload: unknown): { kind: string; message: string; named: boolean } {
  const outcome = runJob(payload, CONTEXT);
  if (outcome.ok) throw new Error('the job ran');
  return { kind: outcome.kind, message: outcome.message, named: outcome.payload !== undefined };
}

describe('the job identity check in the worker', () => {
  it('runs a planned job and records the key and seed it was given', () => {
    const payload = payloadOf(1);
    const outcome = runJob(payload, CONTEXT);
    if (!outcome.ok) throw new Error(outcome.message);
    expect(outcome.record.key).toBe(payload.key);
    expect(outcome.record.seed).toBe(payload.seed);
  });

  it('refuses a real key and seed carried with other parameters (noise 1000), naming no job', () => {
    // The forgery of the issue: key and seed of a real job, one parameter changed.
    const real = payloadOf(0);
    const forged = { ...real, params: { ...real.params, noise: 1000 } };
    const r = refusal(forged);
    expect(r.kind).toBe('invalid');
    expect(r.message).toMatch(/^invalid job identity: key [0-9a-f]{32} is not the key of its model/);
    // No failure record may be filed under the real job's key.
    expect(r.named).toBe(false);
  });

  it('refuses a forged seed, and a forged seed with a root seed forged to match it is caught by readers only', () => {
    const real = payloadOf(0);
    const r = refusal({ ...real, seed: real.seed + 1 });
    expect(r.message).toMatch(/^invalid job identity: seed \d+ is not the seed of job/);
    expect(r.named).toBe(false);
    // With the root seed changed too the payload is consistent in itself: the worker runs it,
    // and the record's seed is not the sweep's (sweep.json's seed 11 gives another).
    const consistent = { ...real, rootSeed: 12, seed: jobSeed(12, real.key) };
    const outcome = runJob(consistent, CONTEXT);
    expect(outcome.ok).toBe(true);
    expect(jobSeed(11, real.key)).not.toBe(consistent.seed);
  });

  it('refuses a point that is not what the parameters say, and a replicate that is not the key', () => {
    const real = payloadOf(2);
    const lying = refusal({ ...real, point: { patternOverlap: 0 } });
    expect(lying.message).toMatch(/^invalid job identity: point\.patternOverlap is 0 but the parameters give 0\.5/);
    const extraName = refusal({ ...real, point: { ...real.point, unknownThing: 1 } });
    expect(extraName.message).toMatch(/point\.unknownThing/);
    const replicate = refusal({ ...real, replicate: real.replicate + 1 });
    expect(replicate.message).toMatch(/^invalid job identity: key/);
  });

  it('refuses a self-consistent key over parameters that leave out defaults the model would fill in', () => {
    const real = payloadOf(0);
    // Only the varied parameter, key and seed recomputed to match: the model would run with defaults the key does not cover.
    const params = { patternOverlap: 0 };
    const key = jobKey(real.model, real.modelVersion, params, 0);
    const r = refusal({ ...real, params, key, seed: jobSeed(real.rootSeed, key) });
    expect(r.message).toMatch(/^invalid job identity: the parameters leave out some the model runs with/);
    expect(r.named).toBe(false);
  });

  it('refuses a payload with a field beyond the payload schema, or without the root seed', () => {
    const real = payloadOf(0);
    const extra = refusal({ ...real, command: 'rm -rf /' });
    expect(extra.message).toMatch(/^invalid job payload: .*command/i);
    const { rootSeed: _dropped, ...withoutRoot } = real;
    expect(refusal(withoutRoot).message).toMatch(/payload\.rootSeed/);
  });
});
