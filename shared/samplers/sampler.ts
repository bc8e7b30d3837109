import type { RangeKind } from '../sweep/ranges.js';

/**
 * What a sampler declares about itself. The sweep schema, the loader's
 * checks, help texts, the JSON Schema and the report all read these fields,
 * so a new sampler is one file with its descriptor plus one line in
 * `shared/samplers/index.ts`.
 */
interface SamplerBase<K extends string> {
  /** The `sampler.kind` a sweep file names. */
  readonly kind: K;
  /** One line on what it does: help texts, the JSON Schema, docs. */
  readonly help: string;
  /** Range kinds it takes in `vary`. */
  readonly ranges: readonly RangeKind[];
  /** Most varied parameters it supports (Infinity when it sets no limit of its own). */
  readonly maxDimensions: number;
}

/** Every combination of the ranges' values: no point count, points repeat values, so reports keep one row per point. */
export interface ProductSampler<K extends string = string> extends SamplerBase<K> {
  readonly needsPoints: false;
}

/** Draws `points` points in the unit cube, mapped onto the ranges; reports bin them. */
export interface DrawingSampler<K extends string = string> extends SamplerBase<K> {
  readonly needsPoints: true;
  /** `count` points in [0, 1)^dimensions, lazily, the same for the same arguments on every machine. */
  unitPoints(count: number, dimensions: number, seed: number): Generator<number[]>;
}

export type SamplerDescriptor<K extends string = string> = ProductSampler<K> | DrawingSampler<K>;
