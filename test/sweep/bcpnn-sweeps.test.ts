import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import { countJobs, expandJobs } from '../../shared/sweep/expand.js';
import { loadSweepFile, parseSweepText } from '../../shared/sweep/load.js';
import { iteratePoints } from '../../shared/sweep/points.js';

function rejection(text: string): InputError {
  try {
    parseSweepText(text, 'bcpnn.yaml');
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return error as InputError;
  }
  throw new Error('expected an InputError, got none');
}

describe('sweeps of the bcpnn-sequences model', () => {
  it('validates the overlap-map example: 11 x 4 x 2 points, 10 replicates each', async () => {
    const sweep = await loadSweepFile(join(process.cwd(), 'examples', 'overlap-map.yaml'));
    expect(sweep.model.id).toBe('bcpnn-sequences');
    expect(sweep.pointCount).toBe(88);
    expect(countJobs(sweep)).toBe(880);
    expect(sweep.variedNames).toEqual(['patternOverlap', 'overlapLength', 'tauZPre']);
    const jobs = [...expandJobs(sweep)];
    const first = jobs[0];
    // Keys and seeds are exactly those of shared/job-identity.ts, for every job.
    for (const job of jobs) {
      expect(job.key).toBe(jobKey('bcpnn-sequences', sweep.model.version, job.params, job.replicate));
      expect(job.seed).toBe(jobSeed(7, job.key));
    }
    expect(new Set(jobs.map((j) => j.key)).size).toBe(880);
    // Full parameters carry the model defaults (model-spec.md: tauP 5000, cueStrength 20).
    expect(first!.params).toMatchObject({
      hypercolumns: 10,
      minicolumns: 20,
      sequenceLength: 6,
      tauP: 5000,
      cueStrength: 20,
      patternOverlap: 0,
    });
  });

  it('validates the random-search example with 128 distinct Sobol points', async () => {
    const sweep = await loadSweepFile(join(process.cwd(), 'examples', 'random-search.yaml'));
    expect(sweep.spec.sampler).toEqual({ kind: 'sobol', points: 128 });
    const points = [...iteratePoints(sweep)];
    expect(points).toHaveLength(128);
    // Sobol starts at the zero point: every range at its low end.
    expect(points[0]).toEqual({ patternOverlap: 0, tauZPre: 20, adaptGain: 0.5, overlapLength: 1 });
  });

  it('finds the point where overlapLength breaks the sequence length rule', () => {
    // model-spec.md: overlapStart >= 1 and start + k <= L; with L = 4 only k <= 3 can fit.
    const error = rejection('name: b\nfixed: { sequenceLength: 4 }\nvary:\n  overlapLength: { list: [1, 2, 4] }\n');
    const issue = error.issues.find((i) => i.path === 'vary.overlapLength');
    expect(issue?.message).toContain('at point 3 (overlapLength=4)');
    expect(error.issues.filter((i) => i.message.startsWith('at point'))).toHaveLength(1);
  });

  it('checks every point against cross-field rules, not only the first', () => {
    // model-spec.md: every time constant must be >= dt.
    const error = rejection('name: b\nfixed: { dt: 10 }\nvary:\n  tauZPost: { list: [20, 5, 30] }\n');
    const issue = error.issues.find((i) => i.path === 'vary.tauZPost');
    expect(issue?.message).toContain('at point 2 (tauZPost=5)');
    expect(issue?.message).toContain('>= dt');
  });

  it('suggests the right spelling of a mistyped parameter', () => {
    const error = rejection('name: b\nvary:\n  tauZpre: { list: [50, 100] }\n');
    const issue = error.issues.find((i) => i.path === 'vary.tauZpre');
    expect(issue?.message).toContain('did you mean tauZPre');
  });
});
