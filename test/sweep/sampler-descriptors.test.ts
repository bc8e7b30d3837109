import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { SAMPLER_KINDS, SAMPLERS, samplerFor, samplersAccepting } from '../../shared/samplers/index.js';
import { sweepJsonSchema } from '../../shared/sweep/json-schema.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { RANGE_FORMS, RANGE_KINDS } from '../../shared/sweep/ranges.js';
import { SamplerSchema } from '../../shared/sweep/schema.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

function refusal(text: string): InputError {
  try {
    parseSweepText(text, 's.yaml');
  } catch (error) {
    if (error instanceof InputError) return error;
    throw error;
  }
  throw new Error('accepted');
}

describe('sampler descriptors', () => {
  it('register grid, random, lhs and sobol, each kind once', () => {
    expect(SAMPLER_KINDS).toEqual(['grid', 'random', 'lhs', 'sobol']);
    for (const sampler of SAMPLERS) expect(samplerFor(sampler.kind)).toBe(sampler);
  });

  it('decide which samplers the schema asks points of', () => {
    for (const sampler of SAMPLERS) {
      const without = SamplerSchema.safeParse({ kind: sampler.kind });
      const withPoints = SamplerSchema.safeParse({ kind: sampler.kind, points: 8 });
      expect(without.success).toBe(!sampler.needsPoints);
      expect(withPoints.success).toBe(sampler.needsPoints);
    }
  });

  it('decide which ranges each sampler takes, and the loader refuses the others naming the samplers that take them', () => {
    for (const sampler of SAMPLERS) {
      for (const kind of RANGE_KINDS) {
        const range = {
          list: '{ list: [1, 2] }',
          steps: '{ from: 1, to: 2, steps: 2 }',
          between: '{ between: [1, 2] }',
          among: '{ among: [1, 2] }',
        }[kind];
        const text = `name: s\nmodel: no-op\nsampler: { kind: ${sampler.kind}${sampler.needsPoints ? ', points: 4' : ''} }\nvary: { value: ${range} }\n`;
        if ((sampler.ranges as readonly string[]).includes(kind)) {
          expect(parseSweepText(text, 's.yaml').variedNames).toEqual(['value']);
          continue;
        }
        const issue = refusal(text).issues.find((i) => i.path === `vary.value.${RANGE_FORMS[kind].key}`);
        const takers = samplersAccepting(kind).map((s) => s.kind);
        expect(takers.length).toBeGreaterThan(0);
        for (const taker of takers) expect(issue?.message).toContain(taker);
        expect(issue?.message).toContain(`with the ${sampler.kind} sampler use`);
      }
    }
  });

  it('put their help text into the JSON Schema', () => {
    const text = JSON.stringify(sweepJsonSchema());
    for (const sampler of SAMPLERS) expect(text).toContain(JSON.stringify(sampler.help));
  });

  it('hold the Sobol sampler to its 40 dimensions of direction numbers', () => {
    expect(samplerFor('sobol').maxDimensions).toBe(40);
    expect(samplerFor('random').maxDimensions).toBe(Number.POSITIVE_INFINITY);
  });
});
