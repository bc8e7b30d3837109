import { createHash } from 'node:crypto';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { xoroshiro128plusFromState } from 'pure-rand/generator/xoroshiro128plus';
import { describe, expect, it } from 'vitest';
import { fillNormal, zigguratNormal } from '../../shared/models/bcpnn-sequences/normal-noise.js';
import { createRandom, type RandomSource, Xoroshiro128Plus } from '../../shared/random.js';

// Reference: the pure-rand library (xoroshiro128plus and uniformFloat64), a
// general-purpose implementation of the same generator (Blackman & Vigna 2018).

/** pure-rand's generator in the state createRandom derives from (seed, stream). */
function libraryGenerator(seed: number, stream: string) {
  const digest = createHash('sha256').update(`recallscape-rng:${stream}:${seed}`).digest();
  return xoroshiro128plusFromState([
    digest.readInt32LE(0),
    digest.readInt32LE(4),
    digest.readInt32LE(8),
    digest.readInt32LE(12),
  ]);
}

/** A random source whose uniform() is pure-rand's, for zigguratNormal (which only calls uniform()). */
function librarySource(seed: number, stream: string): RandomSource {
  const rng = libraryGenerator(seed, stream);
  return { uniform: () => uniformFloat64(rng) } as unknown as RandomSource;
}

describe('the random stream', () => {
  it('gives the 32-bit outputs of pure-rand xoroshiro128plus from the same state', () => {
    for (const state of [
      [1, 0, 0, 0],
      [-1, 2147483647, -2147483648, 12345],
      [0x12345678, -0x789abcde, 0x0badf00d, -1],
    ]) {
      const ours = new Xoroshiro128Plus(state[0]!, state[1]!, state[2]!, state[3]!);
      const theirs = xoroshiro128plusFromState(state);
      let differing = 0;
      for (let n = 0; n < 20_000; n++) if (ours.next() !== theirs.next()) differing++;
      expect(differing).toBe(0);
    }
  });

  it('gives the uniform numbers of pure-rand uniformFloat64 for every seed and stream', () => {
    for (const [seed, stream] of [
      [0, 'noise'],
      [1, 'patterns'],
      [2 ** 53 - 1, 'sampler'],
      [987654321, 'main'],
    ] as const) {
      const ours = createRandom(seed, stream);
      const theirs = libraryGenerator(seed, stream);
      let differing = 0;
      for (let n = 0; n < 20_000; n++) if (ours.uniform() !== uniformFloat64(theirs)) differing++;
      expect(differing).toBe(0);
    }
  });

  it('fills normal noise with the same numbers as one ziggurat draw at a time on the library stream, and leaves the stream where those draws do', () => {
    for (const seed of [3, 4, 5]) {
      const ours = createRandom(seed, 'noise');
      const reference = librarySource(seed, 'noise');
      // Blocks of several sizes, 300,000 draws in all: about 3,000 take the slow path.
      for (const size of [1, 7, 200, 2500, 97_292, 200_000]) {
        const block = new Float64Array(size);
        fillNormal(ours, block, 0.5);
        for (const x of block) {
          const expected = 0.5 * zigguratNormal(reference);
          if (x !== expected) expect(x).toBe(expected);
        }
      }
      // The generator state written back after the fill: the next uniform numbers agree too.
      for (let n = 0; n < 100; n++) expect(ours.uniform()).toBe(reference.uniform());
    }
  });
});
