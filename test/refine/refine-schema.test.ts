import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { sweepTrialRange } from '../../shared/refine/sweep-design.js';
import { SWEEP_FORMAT } from '../../shared/sweep/hash.js';
import { parseSweepText, sweepFromStored } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const ADAPTIVE = `name: adaptive-check
model: bcpnn-sequences
fixed: { hypercolumns: 6, minicolumns: 12 }
vary:
  patternOverlap: { from: 0, to: 1, steps: 6 }
  overlapLength: { list: [1, 3] }
refine:
  replicates: { start: 8, max: 64 }
report: { x: patternOverlap, y: overlapLength }
`;

function rejection(text: string): InputError {
  try {
    parseSweepText(text, 'bad.yaml');
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return error as InputError;
  }
  throw new Error('expected an InputError, got none');
}

describe('the refine section', () => {
  it('fills in the defaults: success, level 0.5, confidence 0.95, three rounds', () => {
    const sweep = parseSweepText(ADAPTIVE, 'adaptive.yaml');
    expect(sweep.spec.refine).toEqual({
      metric: 'success',
      level: 0.5,
      confidence: 0.95,
      replicates: { start: 8, max: 64 },
      rounds: 3,
    });
  });

  it('refuses refine together with a top-level replicates, naming both fields', () => {
    const error = rejection(`${ADAPTIVE}replicates: 10\n`);
    const issue = error.issues.find((i) => i.path === 'replicates');
    expect(issue?.message).toContain('replicates and refine cannot both be given');
    expect(issue?.message).toContain('refine.replicates');
  });

  it('refuses a maximum below the start and names the field', () => {
    const error = rejection(ADAPTIVE.replace('max: 64', 'max: 4'));
    expect(error.issues.map((i) => i.path)).toContain('refine.replicates.max');
  });

  it('refuses a sampled sweep and a parameter without numbers to refine along', () => {
    const sampled = rejection(
      'name: s\nmodel: no-op\nvary:\n  value: { between: [0, 1] }\nsampler: { kind: random, points: 5 }\nrefine: { replicates: { start: 2, max: 4 } }\n',
    );
    expect(sampled.issues.find((i) => i.path === 'refine')?.message).toContain('grid');
    const words = rejection(
      'name: s\nmodel: no-op\nvary:\n  label: { list: [a, b] }\nrefine: { replicates: { start: 2, max: 4 }, along: [label] }\n',
    );
    expect(words.issues.find((i) => i.path === 'refine.along.0')?.message).toContain('not numbers');
  });

  it('refuses an unknown key inside refine, naming it', () => {
    const error = rejection(
      ADAPTIVE.replace('replicates: { start: 8, max: 64 }', 'replicates: { start: 8, max: 64 }\n  levle: 0.3'),
    );
    expect(error.message + JSON.stringify(error.issues)).toContain('levle');
  });

  it('changes the sweep hash, and survives a round trip through sweep.json', () => {
    const adaptive = parseSweepText(ADAPTIVE, 'adaptive.yaml');
    const plain = parseSweepText(ADAPTIVE.replace(/refine:\n.*\n/, ''), 'plain.yaml');
    expect(adaptive.hash).not.toBe(plain.hash);
    const stored = {
      format: SWEEP_FORMAT,
      hash: adaptive.hash,
      codeVersion: 'x',
      createdAt: 'now',
      source: null,
      sweep: adaptive.spec,
    };
    expect(sweepFromStored(JSON.parse(JSON.stringify(stored))).hash).toBe(adaptive.hash);
  });

  it('estimates the trials of an adaptive sweep as a range', () => {
    const range = sweepTrialRange(parseSweepText(ADAPTIVE, 'adaptive.yaml'));
    // 12 starting points x 8; worst: each of 2 rows has 5 gaps of 0.2, split 3 rounds deep -> 7 points each (by hand):
    // (6 + 35) x 2 = 82 points x 64.
    expect(range).toEqual({ best: 96, worst: 82 * 64, bestPoints: 12, worstPoints: 82 });
  });
});
