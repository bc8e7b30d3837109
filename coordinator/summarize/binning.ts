/**
 * Bin edges for points drawn at random (random, Latin hypercube, Sobol):
 * equal-width bins, in log space when the range was sampled on a log scale,
 * so every bin holds about the same share of the samples.
 */
export function binEdges(lo: number, hi: number, bins: number, log: boolean): number[] {
  if (!Number.isInteger(bins) || bins < 1) throw new RangeError(`bins must be a positive integer, got ${bins}`);
  if (!(Number.isFinite(lo) && Number.isFinite(hi)) || hi < lo) throw new RangeError(`bad bin range [${lo}, ${hi}]`);
  if (log && !(lo > 0)) throw new RangeError(`a log-scaled range needs positive bounds, got [${lo}, ${hi}]`);
  const edges: number[] = [];
  for (let i = 0; i <= bins; i++) {
    if (i === 0) edges.push(lo);
    else if (i === bins) edges.push(hi);
    else if (log) edges.push(Math.exp(Math.log(lo) + ((Math.log(hi) - Math.log(lo)) * i) / bins));
    else edges.push(lo + ((hi - lo) * i) / bins);
  }
  return edges;
}

/**
 * Index of the bin holding `value`: bins are [edge_i, edge_i+1), the last one
 * closed. Returns -1 outside the range. Guessed in (log) space, where bins
 * are equal-width, then corrected against the edges.
 */
export function binIndex(edges: readonly number[], log: boolean, value: number): number {
  const bins = edges.length - 1;
  const lo = edges[0];
  const hi = edges[bins];
  if (lo === undefined || hi === undefined || bins < 1 || !Number.isFinite(value)) return -1;
  if (value < lo || value > hi) return -1;
  if (hi === lo) return 0;
  const t = log ? (Math.log(value) - Math.log(lo)) / (Math.log(hi) - Math.log(lo)) : (value - lo) / (hi - lo);
  let i = Math.floor(t * bins);
  if (i >= bins) i = bins - 1;
  if (i < 0) i = 0;
  // The guess is exact for equal-width bins; rounding at an edge, or edges
  // rounded to whole numbers, move it a step or a few: the edges list is the truth.
  while (i > 0 && value < (edges[i] as number)) i -= 1;
  while (i < bins - 1 && value >= (edges[i + 1] as number)) i += 1;
  return i;
}
