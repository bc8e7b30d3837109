import type { RangeKind } from '../sweep/ranges.js';
import { gridSampler } from './grid.js';
import { latinHypercubeSampler } from './latin-hypercube.js';
import { randomSampler } from './random.js';
import type { SamplerDescriptor } from './sampler.js';
import { sobolSampler } from './sobol.js';

export type { DrawingSampler, ProductSampler, SamplerDescriptor } from './sampler.js';

/**
 * Every sampler a sweep file can name, in the order help texts list them.
 * Adding a sampler: one file exporting its descriptor, one entry here.
 */
export const SAMPLERS = [gridSampler, randomSampler, latinHypercubeSampler, sobolSampler] as const;

export type SamplerKind = (typeof SAMPLERS)[number]['kind'];

export const SAMPLER_KINDS = SAMPLERS.map((s) => s.kind) as [SamplerKind, ...SamplerKind[]];

/** The sampler used when a sweep file names none. */
export const DEFAULT_SAMPLER: SamplerKind = gridSampler.kind;

const BY_KIND = new Map<string, SamplerDescriptor>(SAMPLERS.map((s) => [s.kind, s]));

/** The descriptor of a sampler kind (a kind the schema accepted). */
export function samplerFor(kind: SamplerKind): SamplerDescriptor {
  const sampler = BY_KIND.get(kind);
  if (sampler === undefined) throw new TypeError(`no sampler "${kind}"`);
  return sampler;
}

/** Samplers that take a range kind, in registry order. */
export function samplersAccepting(range: RangeKind): SamplerDescriptor[] {
  return SAMPLERS.filter((s) => (s.ranges as readonly RangeKind[]).includes(range));
}
