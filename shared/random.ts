import { createHash, hash } from 'node:crypto';

/** Largest seed accepted anywhere: seeds are non-negative safe integers. */
export const MAX_SEED = Number.MAX_SAFE_INTEGER;

/**
 * The one random source of a job. Everything random in a simulation or a
 * sampler draws from an instance of this, seeded by a safe integer, so the
 * same seed gives the same numbers on every machine.
 */
export interface RandomSource {
  /** Uniform in [0, 1), 53 random bits. */
  uniform(): number;
  /** Uniform integer in [0, n). */
  int(n: number): number;
  /** Standard normal draw (polar Box-Muller, both values used). */
  normal(): number;
  /**
   * The generator behind uniform(), for hot loops that keep its state in
   * local variables for a whole block of draws (see Xoroshiro128Plus).
   */
  readonly generator: Xoroshiro128Plus;
}

/** uniform() joins 26 and 27 bits of two outputs into 53: masks and weights 2^-26, 2^-53. */
const UNIFORM_MASK_HI = 0x3ffffff;
const UNIFORM_MASK_LO = 0x7ffffff;
const UNIFORM_SCALE_HI = 2 ** -26;
const UNIFORM_SCALE_LO = 2 ** -53;

/**
 * xoroshiro128+ (Blackman & Vigna 2018) on four signed 32-bit words, giving
 * the low 32 bits of each 64-bit output: the same stream, word for word, as
 * the xoroshiro128plus generator of the pure-rand library (the tests compare
 * the two), and the same uniform() as its uniformFloat64. The words are public so that a loop can copy
 * them into locals, run `step` inline, and write them back: V8 keeps locals
 * in registers but must load and store object fields on every call.
 */
export class Xoroshiro128Plus {
  constructor(
    public s01: number,
    public s00: number,
    public s11: number,
    public s10: number,
  ) {}

  /** Next 32-bit output (signed). */
  next(): number {
    const s00 = this.s00;
    const s01 = this.s01;
    const s10 = this.s10;
    const s11 = this.s11;
    const out = (s00 + s10) | 0;
    const a0 = s10 ^ s00;
    const a1 = s11 ^ s01;
    this.s00 = (s00 << 24) ^ (s01 >>> 8) ^ a0 ^ (a0 << 16);
    this.s01 = (s01 << 24) ^ (s00 >>> 8) ^ a1 ^ ((a1 << 16) | (a0 >>> 16));
    this.s10 = (a1 << 5) ^ (a0 >>> 27);
    this.s11 = (a0 << 5) ^ (a1 >>> 27);
    return out;
  }

  /** Uniform in [0, 1): 26 bits of one output and 27 of the next, 53 in all. */
  uniform(): number {
    const hi = this.next() & UNIFORM_MASK_HI;
    const lo = this.next() & UNIFORM_MASK_LO;
    return hi * UNIFORM_SCALE_HI + lo * UNIFORM_SCALE_LO;
  }
}

/**
 * Seed -> generator state. The 128-bit xoroshiro state is taken from a hash of
 * the seed so that all 53 bits of the seed matter and nearby seeds give
 * unrelated streams (a plain 32-bit seed would alias seeds 2^32 apart).
 */
export function createRandom(seed: number, stream = 'main'): RandomSource {
  if (!Number.isSafeInteger(seed) || seed < 0) {
    throw new RangeError(`seed must be an integer in [0, 2^53 - 1], got ${String(seed)}`);
  }
  const digest = createHash('sha256').update(`recallscape-rng:${stream}:${seed}`).digest();
  const rng = new Xoroshiro128Plus(
    digest.readInt32LE(0),
    digest.readInt32LE(4),
    digest.readInt32LE(8),
    digest.readInt32LE(12),
  );
  // xoroshiro must not start from the all-zero state.
  if ((rng.s01 | rng.s00 | rng.s11 | rng.s10) === 0) rng.s01 = 1;
  let spare = 0;
  let hasSpare = false;
  const uniform = (): number => rng.uniform();
  return {
    generator: rng,
    uniform,
    int(n: number): number {
      if (!Number.isInteger(n) || n <= 0) throw new RangeError(`int(n) needs a positive integer, got ${n}`);
      return Math.floor(uniform() * n);
    },
    normal(): number {
      if (hasSpare) {
        hasSpare = false;
        return spare;
      }
      let x = 0;
      let y = 0;
      let r = 0;
      do {
        x = 2 * uniform() - 1;
        y = 2 * uniform() - 1;
        r = x * x + y * y;
      } while (r >= 1 || r === 0);
      const f = Math.sqrt((-2 * Math.log(r)) / r);
      spare = y * f;
      hasSpare = true;
      return x * f;
    },
  };
}

/** Derive a seed (safe integer) from a root seed and a label such as a job key. */
export function deriveSeed(rootSeed: number, label: string): number {
  // One-shot hex digest: faster than createHash for short texts (readers check every record's seed).
  const hex = hash('sha256', `recallscape-seed:${rootSeed}:${label}`);
  // 53 bits: high 21 bits of the first big-endian word, all 32 of the second.
  return (Number.parseInt(hex.slice(0, 8), 16) >>> 11) * 0x100000000 + Number.parseInt(hex.slice(8, 16), 16);
}
