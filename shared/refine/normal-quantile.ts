/**
 * Standard normal distribution function by composite Simpson integration of
 * the density from 0 to |z| (4,000 panels: error far below 1e-12 for the z
 * used here). Slow next to a rational approximation, but short and checkable,
 * and the design asks for a handful of values per sweep.
 */
export function normalCdf(z: number): number {
  if (Number.isNaN(z)) return Number.NaN;
  const a = Math.min(Math.abs(z), 12);
  if (a === 0) return 0.5;
  const panels = 4000;
  const h = a / panels;
  const density = (t: number): number => Math.exp(-0.5 * t * t);
  let sum = density(0) + density(a);
  for (let i = 1; i < panels; i++) sum += (i % 2 === 1 ? 4 : 2) * density(i * h);
  const half = (sum * h) / 3 / Math.sqrt(2 * Math.PI);
  return z > 0 ? 0.5 + half : 0.5 - half;
}

const cache = new Map<number, number>();

/** z with P(|Z| <= z) = confidence for a standard normal Z (bisection on normalCdf). */
export function twoSidedZ(confidence: number): number {
  if (!(confidence > 0 && confidence < 1)) throw new RangeError(`confidence must be in (0, 1), got ${confidence}`);
  const known = cache.get(confidence);
  if (known !== undefined) return known;
  const target = (1 + confidence) / 2;
  let lo = 0;
  let hi = 12;
  for (let i = 0; i < 80; i++) {
    const mid = (lo + hi) / 2;
    if (normalCdf(mid) < target) lo = mid;
    else hi = mid;
  }
  const z = (lo + hi) / 2;
  cache.set(confidence, z);
  return z;
}
