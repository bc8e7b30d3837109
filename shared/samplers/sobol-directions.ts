/**
 * Sobol direction numbers of Joe & Kuo (2008), "Constructing Sobol sequences
 * with better two-dimensional projections", SIAM J. Sci. Comput. 30(5),
 * 2635-2654; table `new-joe-kuo-6.21201`, rows for dimensions 2..40 (the same
 * table SciPy's `qmc.Sobol` ships). Dimension 1 is the van der Corput
 * sequence and needs no row.
 *
 * Each row is [s, a, m]: s is the degree of the primitive polynomial, a
 * encodes its inner coefficients (most significant bit first), and m holds the
 * s initial odd direction integers m_1..m_s with m_k < 2^k.
 */
export type DirectionRow = readonly [s: number, a: number, m: readonly number[]];

export const JOE_KUO_ROWS: readonly DirectionRow[] = [
  [1, 0, [1]], // dimension 2
  [2, 1, [1, 3]], // dimension 3
  [3, 1, [1, 3, 1]], // dimension 4
  [3, 2, [1, 1, 1]], // dimension 5
  [4, 1, [1, 1, 3, 3]], // dimension 6
  [4, 4, [1, 3, 5, 13]], // dimension 7
  [5, 2, [1, 1, 5, 5, 17]], // dimension 8
  [5, 4, [1, 1, 5, 5, 5]], // dimension 9
  [5, 7, [1, 1, 7, 11, 19]], // dimension 10
  [5, 11, [1, 1, 5, 1, 1]], // dimension 11
  [5, 13, [1, 1, 1, 3, 11]], // dimension 12
  [5, 14, [1, 3, 5, 5, 31]], // dimension 13
  [6, 1, [1, 3, 3, 9, 7, 49]], // dimension 14
  [6, 13, [1, 1, 1, 15, 21, 21]], // dimension 15
  [6, 16, [1, 3, 1, 13, 27, 49]], // dimension 16
  [6, 19, [1, 1, 1, 15, 7, 5]], // dimension 17
  [6, 22, [1, 3, 1, 15, 13, 25]], // dimension 18
  [6, 25, [1, 1, 5, 5, 19, 61]], // dimension 19
  [7, 1, [1, 3, 7, 11, 23, 15, 103]], // dimension 20
  [7, 4, [1, 3, 7, 13, 13, 15, 69]], // dimension 21
  [7, 7, [1, 1, 3, 13, 7, 35, 63]], // dimension 22
  [7, 8, [1, 3, 5, 9, 1, 25, 53]], // dimension 23
  [7, 14, [1, 3, 1, 13, 9, 35, 107]], // dimension 24
  [7, 19, [1, 3, 1, 5, 27, 61, 31]], // dimension 25
  [7, 21, [1, 1, 5, 11, 19, 41, 61]], // dimension 26
  [7, 28, [1, 3, 5, 3, 3, 13, 69]], // dimension 27
  [7, 31, [1, 1, 7, 13, 1, 19, 1]], // dimension 28
  [7, 32, [1, 3, 7, 5, 13, 19, 59]], // dimension 29
  [7, 37, [1, 1, 3, 9, 25, 29, 41]], // dimension 30
  [7, 41, [1, 3, 5, 13, 23, 1, 55]], // dimension 31
  [7, 42, [1, 3, 7, 3, 13, 59, 17]], // dimension 32
  [7, 50, [1, 3, 1, 3, 5, 53, 69]], // dimension 33
  [7, 55, [1, 1, 5, 5, 23, 33, 13]], // dimension 34
  [7, 56, [1, 1, 7, 7, 1, 61, 123]], // dimension 35
  [7, 59, [1, 1, 7, 9, 13, 61, 49]], // dimension 36
  [7, 62, [1, 3, 3, 5, 3, 55, 33]], // dimension 37
  [8, 14, [1, 3, 1, 15, 31, 13, 49, 245]], // dimension 38
  [8, 21, [1, 3, 5, 15, 31, 59, 63, 97]], // dimension 39
  [8, 22, [1, 3, 1, 11, 11, 11, 77, 249]], // dimension 40
];

/** Largest dimension count the Sobol sampler supports. */
export const SOBOL_MAX_DIMENSIONS = JOE_KUO_ROWS.length + 1;
