/**
 * Every ceiling a sweep file is held to, in one place. They are checked
 * before anything is expanded, so any file is accepted or refused quickly
 * and in little memory, whatever numbers it holds (see bench/validation.ts).
 */
export const SWEEP_LIMITS = {
  /** A JSON sweep file. */
  fileBytes: 2 * 1024 * 1024,
  /** A YAML sweep file: YAML is read about a hundred times slower than JSON. */
  yamlBytes: 32 * 1024,
  /** Nesting of lists and maps, counted from the top of the file. */
  depth: 32,
  /** Numbers, strings, booleans, lists and maps in the whole file. */
  values: 200_000,
  /** Entries of one list. */
  listLength: 100_000,
  /** Keys of one map. */
  mapKeys: 1_000,
  /** Characters of one key. */
  keyLength: 200,
  /** Characters of one text value in a range (`list`, `among`). */
  rangeText: 1_000,
  replicates: 100_000,
  /** Values of one from/to/steps range. */
  steps: 100_000,
  /** `points` of a drawing sampler. */
  sampledPoints: 1_000_000,
  /** Points of a product (grid) sweep. */
  gridPoints: 5_000_000,
  /** `points` x varied parameters of a drawing sampler: the numbers drawn to list its points. */
  sampledValues: 1_000_000,
} as const;

/**
 * Points run through the model's parameter schema while loading. A sweep
 * with at most this many points has every point checked; a larger one has
 * a fixed, spread-out selection checked (see check-points.ts).
 */
export const CHECKED_POINTS = 1024;
/** Fewest points checked, however large `fixed` is. */
export const MIN_CHECKED_POINTS = 4;
