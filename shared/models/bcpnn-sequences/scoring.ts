/**
 * Decoding a recall into a sequence of pattern ids, and scoring it
 * (docs/model.md, "Decoding and scoring").
 */

/** The id of -1 stands for "no pattern active" at a step. */
export const NONE = -1;

/**
 * The active pattern at one step: argmax of the matches (lowest id on ties)
 * if that maximum is >= threshold, else NONE.
 */
export function activeAt(matches: ArrayLike<number>, offset: number, nPatterns: number, threshold: number): number {
  let best = NONE;
  let bestValue = -Infinity;
  for (let k = 0; k < nPatterns; k++) {
    const v = matches[offset + k] as number;
    if (v > bestValue) {
      bestValue = v;
      best = k;
    }
  }
  return bestValue >= threshold ? best : NONE;
}

export interface Run {
  readonly id: number;
  /** First step of the run. */
  readonly start: number;
  /** Number of steps. */
  readonly length: number;
}

/**
 * Runs of equal ids (NONE included, so that a long silence separates two
 * visits of the same pattern), with runs shorter than minDwell ms dropped and
 * then neighbours that became equal merged.
 */
export function decodeRuns(active: ArrayLike<number>, dt: number, minDwell: number): Run[] {
  const raw: Run[] = [];
  let start = 0;
  for (let t = 1; t <= active.length; t++) {
    if (t === active.length || active[t] !== active[start]) {
      raw.push({ id: active[start] as number, start, length: t - start });
      start = t;
    }
  }
  const merged: Run[] = [];
  for (const run of raw) {
    if (run.length * dt < minDwell) continue;
    const last = merged[merged.length - 1];
    if (last !== undefined && last.id === run.id) {
      merged[merged.length - 1] = { id: last.id, start: last.start, length: run.start + run.length - last.start };
    } else {
      merged.push(run);
    }
  }
  return merged;
}

export interface RecallScore {
  /** Number of leading positions recalled correctly (0..L). */
  readonly correctPrefix: number;
  /** First wrong or missing position, or null when all L are right. */
  readonly firstError: number | null;
  /** Durations (ms) of the runs that make up the correct prefix. */
  readonly dwellMs: readonly number[];
}

/** Compare the first L pattern runs with the sequence's pattern ids. */
export function scoreRecall(
  active: ArrayLike<number>,
  expected: readonly number[],
  dt: number,
  minDwell: number,
): RecallScore {
  const runs = decodeRuns(active, dt, minDwell).filter((r) => r.id !== NONE);
  let correct = 0;
  const dwellMs: number[] = [];
  while (correct < expected.length) {
    const run = runs[correct];
    if (run === undefined || run.id !== expected[correct]) break;
    dwellMs.push(run.length * dt);
    correct++;
  }
  return { correctPrefix: correct, firstError: correct === expected.length ? null : correct, dwellMs };
}
