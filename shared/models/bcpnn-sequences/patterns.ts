import type { RandomSource } from '../../random.js';

/** A pattern: the active minicolumn of every hypercolumn. */
export type Pattern = readonly number[];

/** The stored sequences and their distinct patterns. */
export interface PatternSet {
  /** sequences[s][q] is the pattern at position q of sequence s. */
  readonly sequences: readonly (readonly Pattern[])[];
  /** Distinct patterns, numbered in order of first appearance (s-major, then q). */
  readonly patterns: readonly Pattern[];
  /** ids[s][q]: index into `patterns` of sequences[s][q]. */
  readonly ids: readonly (readonly number[])[];
}

export interface OverlapSpec {
  readonly H: number;
  readonly M: number;
  readonly K: number;
  readonly L: number;
  /** Fraction f of hypercolumns copied from sequence 1 (index 0). */
  readonly f: number;
  readonly k: number;
  readonly start: number;
}

/** Fraction of hypercolumns in which two patterns have the same active minicolumn. */
export function patternOverlap(a: Pattern, b: Pattern): number {
  if (a.length !== b.length || a.length === 0) throw new RangeError('patterns must have the same, non-zero size');
  let same = 0;
  for (let h = 0; h < a.length; h++) if (a[h] === b[h]) same++;
  return same / a.length;
}

/** Number the distinct patterns in order of first appearance. */
export function indexPatterns(sequences: readonly (readonly Pattern[])[]): PatternSet {
  const byKey = new Map<string, number>();
  const patterns: Pattern[] = [];
  const ids = sequences.map((seq) =>
    seq.map((pattern) => {
      const key = pattern.join(',');
      let id = byKey.get(key);
      if (id === undefined) {
        id = patterns.length;
        byKey.set(key, id);
        patterns.push([...pattern]);
      }
      return id;
    }),
  );
  return { sequences: sequences.map((seq) => seq.map((p) => [...p])), patterns, ids };
}

/** Choose `count` distinct values of [0, n) in random order (partial Fisher-Yates). */
function chooseDistinct(rng: RandomSource, n: number, count: number, scratch: Int32Array): Int32Array {
  for (let i = 0; i < n; i++) scratch[i] = i;
  for (let i = 0; i < count; i++) {
    const j = i + rng.int(n - i);
    const t = scratch[i] as number;
    scratch[i] = scratch[j] as number;
    scratch[j] = t;
  }
  return scratch.subarray(0, count);
}

/**
 * Draw K sequences of L patterns with controlled overlap (docs/model.md):
 * disjoint minicolumns per hypercolumn when M >= K*L, otherwise uniform draws
 * with no immediate repeat inside a sequence and distinct cue patterns; then
 * round(f*H) random hypercolumns of every sequence s > 0 copy sequence 0 at
 * each position of [start, start + k).
 */
export function generateSequences(spec: OverlapSpec, rng: RandomSource): PatternSet {
  const { H, M, K, L, f, k, start } = spec;
  const seqs: number[][][] = Array.from({ length: K }, () =>
    Array.from({ length: L }, () => new Array<number>(H).fill(0)),
  );
  const at = (s: number, q: number): number[] => seqs[s]?.[q] as number[];
  const scratch = new Int32Array(Math.max(M, H));
  if (M >= K * L) {
    for (let h = 0; h < H; h++) {
      const chosen = chooseDistinct(rng, M, K * L, scratch);
      for (let s = 0; s < K; s++) for (let q = 0; q < L; q++) at(s, q)[h] = chosen[s * L + q] as number;
    }
  } else {
    const cueKeys = new Set<string>();
    for (let s = 0; s < K; s++) {
      // Cues must differ between sequences: redraw until new (the schema
      // guarantees M^H >= K, so this ends).
      const cue = at(s, 0);
      do {
        for (let h = 0; h < H; h++) cue[h] = rng.int(M);
      } while (cueKeys.has(cue.join(',')));
      cueKeys.add(cue.join(','));
      for (let q = 1; q < L; q++) {
        const prev = at(s, q - 1);
        const cur = at(s, q);
        for (let h = 0; h < H; h++) {
          const v = rng.int(M - 1);
          cur[h] = v >= (prev[h] as number) ? v + 1 : v;
        }
      }
    }
  }
  const copies = Math.round(f * H);
  for (let s = 1; s < K; s++) {
    for (let q = start; q < start + k; q++) {
      const chosen = chooseDistinct(rng, H, copies, scratch);
      for (const h of chosen) at(s, q)[h] = at(0, q)[h] as number;
    }
  }
  return indexPatterns(seqs);
}

/**
 * Mean overlap of the overlapped pairs: sequence 0 against every other
 * sequence at each position of [start, start + k). Null when there is none.
 */
export function achievedOverlap(set: PatternSet, start: number, k: number): number | null {
  const first = set.sequences[0];
  if (first === undefined || set.sequences.length < 2 || k === 0) return null;
  let sum = 0;
  let count = 0;
  for (let s = 1; s < set.sequences.length; s++) {
    for (let q = start; q < start + k; q++) {
      const a = first[q];
      const b = set.sequences[s]?.[q];
      if (a === undefined || b === undefined) continue;
      sum += patternOverlap(a, b);
      count++;
    }
  }
  return count === 0 ? null : sum / count;
}
