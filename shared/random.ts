import { createHash } from 'node:crypto';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { xoroshiro128plusFromState } from 'pure-rand/generator/xoroshiro128plus';

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
  const state: number[] = [digest.readInt32LE(0), digest.readInt32LE(4), digest.readInt32LE(8), digest.readInt32LE(12)];
  // xoroshiro must not start from the all-zero state.
  if (state.reduce((acc, s) => acc | s, 0) === 0) state[0] = 1;
  const rng = xoroshiro128plusFromState(state);
  let spare = 0;
  let hasSpare = false;
  const uniform = (): number => uniformFloat64(rng);
  return {
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
  const digest = createHash('sha256').update(`recallscape-seed:${rootSeed}:${label}`).digest();
  // 53 bits: high 21 bits of the first word, all 32 of the second.
  return (digest.readUInt32BE(0) >>> 11) * 0x100000000 + digest.readUInt32BE(4);
}
