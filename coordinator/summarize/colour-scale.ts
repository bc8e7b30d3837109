import { scaleLinear, scaleSequential } from 'd3-scale';
import { interpolateViridis } from 'd3-scale-chromatic';

export interface ColourScale {
  readonly domain: readonly [number, number];
  colour(value: number): string;
  /** Round values for the legend's tick labels. */
  ticks(count: number): number[];
}

/**
 * Viridis: perceptually uniform, ordered from dark to light, readable in
 * grey-scale print and by readers with the common colour-vision deficiencies.
 * Rates always use [0, 1] so diagrams of different facets compare directly.
 */
export function colourScale(domain: readonly [number, number]): ColourScale {
  let [lo, hi] = domain;
  if (!(hi > lo)) {
    // A constant field still needs a non-empty domain.
    const pad = lo === 0 ? 1 : Math.abs(lo) * 0.1;
    lo -= pad;
    hi += pad;
  }
  const scale = scaleSequential(interpolateViridis).domain([lo, hi]).clamp(true);
  const linear = scaleLinear().domain([lo, hi]);
  return {
    domain: [lo, hi],
    colour: (value) => scale(value),
    ticks: (count) => linear.ticks(count),
  };
}
