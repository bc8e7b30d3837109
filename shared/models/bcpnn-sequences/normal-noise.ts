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

/** 2^-18 and 2^-45: the fraction of uniform()·256 from the 26 and 27 bits. */
const FRACTION_HI = 2 ** -18;
const FRACTION_LO = 2 ** -45;

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

/**
 * Fill `out` with independent Normal(0, sigma^2) draws, in index order: the
 * same numbers as `sigma * zigguratNormal(rng)` called out.length times.
 *
 * The generator's four state words live in local variables (V8 keeps them in
 * registers) and xoroshiro128+ and uniform() are written out inline; the
 * inner loop holds no call, so nothing has to be spilled around one. The
 * words go back to the generator only around the rare slow path and at the
 * end, so the stream is bit for bit the one uniform() gives.
 */
export function fillNormal(rng: RandomSource, out: Float64Array, sigma: number): void {
  const g = rng.generator;
  const length = out.length;
  let n = 0;
  while (n < length) {
    let s00 = g.s00 | 0;
    let s01 = g.s01 | 0;
    let s10 = g.s10 | 0;
    let s11 = g.s11 | 0;
    let slowHi = 0;
    let slowLo = 0;
    for (; n < length; n++) {
      // Two outputs of xoroshiro128+ (Xoroshiro128Plus.next), keeping 26 and 27 bits as
      // uniform() does (its masks written as literals).
      const hi = (s00 + s10) & 0x3ffffff;
      let a0 = s10 ^ s00;
      let a1 = s11 ^ s01;
      const t00 = (s00 << 24) ^ (s01 >>> 8) ^ a0 ^ (a0 << 16);
      const t01 = (s01 << 24) ^ (s00 >>> 8) ^ a1 ^ ((a1 << 16) | (a0 >>> 16));
      s10 = (a1 << 5) ^ (a0 >>> 27);
      s11 = (a0 << 5) ^ (a1 >>> 27);
      const lo = (t00 + s10) & 0x7ffffff;
      a0 = s10 ^ t00;
      a1 = s11 ^ t01;
      s00 = (t00 << 24) ^ (t01 >>> 8) ^ a0 ^ (a0 << 16);
      s01 = (t01 << 24) ^ (t00 >>> 8) ^ a1 ^ ((a1 << 16) | (a0 >>> 16));
      s10 = (a1 << 5) ^ (a0 >>> 27);
      s11 = (a0 << 5) ^ (a1 >>> 27);
      // zigguratNormal's j = uniform()·256 is hi·2^-18 + lo·2^-45 exactly: its
      // integer part is the top 8 of hi's 26 bits and its fraction is exact,
      // so the integer route below gives the same bits and the same x.
      const bits = hi >>> 18;
      const i = bits & (LAYERS - 1);
      const x = ((hi & 0x3ffff) * FRACTION_HI + lo * FRACTION_LO) * (X[i] as number);
      if (!(x < (X[i + 1] as number))) {
        slowHi = hi;
        slowLo = lo;
        break;
      }
      // Sign from bit 7 without a branch (random signs defeat branch prediction).
      out[n] = sigma * x * (1 - ((bits >> 6) & 2));
    }
    g.s00 = s00;
    g.s01 = s01;
    g.s10 = s10;
    g.s11 = s11;
    if (n < length) {
      const bits = slowHi >>> 18;
      const i = bits & (LAYERS - 1);
      const x = ((slowHi & 0x3ffff) * FRACTION_HI + slowLo * FRACTION_LO) * (X[i] as number);
      out[n] = sigma * slowPath(rng, i, x, bits & LAYERS ? -1 : 1);
      n++;
    }
  }
}
