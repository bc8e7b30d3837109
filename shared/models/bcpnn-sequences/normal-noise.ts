import type { RandomSource } from '../../random.js';

/**
 * Fast standard normal draws for the recall noise: the ziggurat method
 * (Marsaglia & Tsang 2000) with 128 layers, fed by the job's RandomSource.
 * Most draws cost one uniform() and one multiply, against a logarithm and a
 * square root per pair for the polar method; at N units per step the noise is
 * otherwise the largest cost of a noisy recall.
 */
const LAYERS = 128;
const R = 3.442619855899;
/** Area of every layer (of exp(-x^2/2), tail included in layer 0). */
const V = 9.91256303526217e-3;

const density = (x: number): number => Math.exp(-0.5 * x * x);

/** X[i]: width of layer i; X[0] is the virtual width of the base, X[128] = 0. */
const X = new Float64Array(LAYERS + 1);
/** F[i] = density(X[i]). */
const F = new Float64Array(LAYERS + 1);
X[0] = V / density(R);
X[1] = R;
for (let i = 1; i < LAYERS - 1; i++) {
  X[i + 1] = Math.sqrt(-2 * Math.log(density(X[i] as number) + V / (X[i] as number)));
}
X[LAYERS] = 0;
for (let i = 0; i <= LAYERS; i++) F[i] = density(X[i] as number);
F[0] = 0;

/** One standard normal draw. */
export function zigguratNormal(rng: RandomSource): number {
  const j = rng.uniform() * 2 * LAYERS;
  const bits = j | 0;
  const i = bits & (LAYERS - 1);
  const x = (j - bits) * (X[i] as number);
  if (x < (X[i + 1] as number)) return x * (1 - ((bits >> 6) & 2));
  return slowPath(rng, i, x, bits & LAYERS ? -1 : 1);
}

/** A draw outside the inner rectangle of its layer: tail, wedge test, or a fresh try. */
function slowPath(rng: RandomSource, layer: number, x0: number, sign0: number): number {
  let i = layer;
  let x = x0;
  let sign = sign0;
  for (;;) {
    if (x < (X[i + 1] as number)) return sign * x;
    if (i === 0) {
      // Tail beyond R (Marsaglia 1964).
      let tx = 0;
      let ty = 0;
      do {
        tx = -Math.log1p(-rng.uniform()) / R;
        ty = -Math.log1p(-rng.uniform());
      } while (2 * ty < tx * tx);
      return sign * (R + tx);
    }
    const y = (F[i] as number) + rng.uniform() * ((F[i + 1] as number) - (F[i] as number));
    if (y < density(x)) return sign * x;
    const j = rng.uniform() * 2 * LAYERS;
    const bits = j | 0;
    i = bits & (LAYERS - 1);
    sign = bits & LAYERS ? -1 : 1;
    x = (j - bits) * (X[i] as number);
  }
}

/** Fill `out` with independent Normal(0, sigma^2) draws, in index order. */
export function fillNormal(rng: RandomSource, out: Float64Array, sigma: number): void {
  for (let n = 0; n < out.length; n++) {
    // The fast path of zigguratNormal, inlined: same draws, same values.
    const j = rng.uniform() * 2 * LAYERS;
    const bits = j | 0;
    const i = bits & (LAYERS - 1);
    const x = (j - bits) * (X[i] as number);
    if (x < (X[i + 1] as number)) {
      // Sign from bit 7 without a branch (random signs defeat branch prediction).
      out[n] = sigma * x * (1 - ((bits >> 6) & 2));
    } else {
      out[n] = sigma * slowPath(rng, i, x, bits & LAYERS ? -1 : 1);
    }
  }
}
