import { NONE } from './scoring.js';

/**
 * Follows the decoding of one recall step by step (docs/model.md, "Decoding
 * and scoring") and tells when its score can no longer change, for
 * `stopWhenDecided`.
 *
 * A run of equal ids is kept once it lasts minDwell ms, whatever follows, and
 * from then on every run before it is final: kept or dropped, merged or not.
 * So the decoded pattern ids up to and including that run are final too. The
 * recall is decided when such a run adds a pattern id that differs from the
 * expected one at its position (the first error), or adds the last expected
 * id (success). Until then it is not: a missing position can still be filled.
 */
export class DecisionWatch {
  private expected: readonly number[] = [];
  /** Id and length (steps) of the current raw run. */
  private runId = NONE;
  private runLength = 0;
  /** Whether the current run already lasted minDwell ms (and was taken into account). */
  private runKept = false;
  /** Id of the last kept run, NONE included; -2 before the first. */
  private lastKeptId = -2;
  /** Number of pattern ids decoded so far, all equal to the expected ones. */
  private position = 0;

  constructor(
    private readonly dt: number,
    private readonly minDwell: number,
  ) {}

  /** Start watching a new recall of a sequence with these pattern ids. */
  reset(expected: readonly number[]): void {
    this.expected = expected;
    this.runId = NONE;
    this.runLength = 0;
    this.runKept = false;
    this.lastKeptId = -2;
    this.position = 0;
  }

  /** The active id of the next step; true when the outcome is decided after this step. */
  push(id: number): boolean {
    if (this.runLength === 0 || id !== this.runId) {
      this.runId = id;
      this.runLength = 1;
      this.runKept = false;
    } else {
      this.runLength++;
    }
    // The same test as decodeRuns, so both keep exactly the same runs.
    if (this.runKept || this.runLength * this.dt < this.minDwell) return false;
    this.runKept = true;
    // A kept run next to a kept run of the same id merges with it: no new id.
    if (id === this.lastKeptId) return false;
    this.lastKeptId = id;
    if (id === NONE) return false;
    if (id !== this.expected[this.position]) return true;
    this.position++;
    return this.position >= this.expected.length;
  }
}
