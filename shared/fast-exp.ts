/**
 * exp(x) for x <= 0, about twice as fast as Math.exp in the softmax of the
 * recall loop, with an error of at most about half a unit in the last place.
 *
 * Table-driven method (Tang 1989, "Table-driven implementation of the
 * exponential function in IEEE floating-point arithmetic"): write
 * x = (64·n + j)·ln2/64 + r with |r| <= ln2/128, so that
 * exp(x) = 2^n · 2^(j/64) · exp(r). 2^(j/64) comes from a table held as a
 * leading double plus a small correction, exp(r) − 1 from its Taylor
 * polynomial of degree 5 (the first neglected term, r^6/720, is below
 * 3.5e-17 on |r| <= ln2/128), and 2^n from a table of powers of two.
 *
 * Arguments above 0 (and NaN) go to Math.exp, so the function is correct
 * everywhere; it is only fast on x <= 0.
 */

/** 64/ln2. */
const INV_STEP = 64 / Math.LN2;
/**
 * ln2/64 in two parts (Cody & Waite 1980): STEP_HI has 32 significant bits,
 * so k·STEP_HI is exact for every |k| < 2^21, and STEP_LO is the rest.
 * ln2 split as in fdlibm's exp: the doubles 0x3fe62e42fee00000 + 0x3dea39ef35793c76.
 */
const STEP_HI = 0.6931471803691238 / 64;
const STEP_LO = 1.9082149292705877e-10 / 64;

/** Below this, exp(x) rounds to 0 in double precision (exp(-745.14) < 2^-1075). */
const UNDERFLOW = -746;

/**
 * 2^(j/64) = TABLE_LEAD[j] + TABLE_TRAIL[j] to about 106 bits, from an exact
 * integer 64th root computed once with BigInt (Number(bigint) rounds to
 * nearest, so TABLE_LEAD is 2^(j/64) correctly rounded).
 */
const TABLE_LEAD = new Float64Array(64);
const TABLE_TRAIL = new Float64Array(64);
/** POW2[n + 1022] = 2^n for n in [-1022, 0]: the normal range of the scale factor. */
const POW2 = new Float64Array(1023);

const PRECISION = 120n;
for (let j = 0; j < 64; j++) {
  // y = floor(2^(j/64) · 2^PRECISION), the integer 64th root of 2^(j + 64·PRECISION).
  const target = 1n << (BigInt(j) + 64n * PRECISION);
  // Newton's iteration from above converges to the floor of the root.
  let y = BigInt(Math.ceil(2 ** (j / 64) * 2 ** 52) + 2) << (PRECISION - 52n);
  for (;;) {
    const next = (63n * y + target / y ** 63n) / 64n;
    if (next >= y) break;
    y = next;
  }
  const scale = 2 ** -Number(PRECISION);
  const lead = Number(y) * scale;
  TABLE_LEAD[j] = lead;
  TABLE_TRAIL[j] = Number(y - BigInt(lead * 2 ** Number(PRECISION))) * scale;
}
for (let n = -1022; n <= 0; n++) POW2[n + 1022] = 2 ** n;

/** 1.5·2^52: x + ROUNDER - ROUNDER is x rounded to an integer (ties to even) for |x| < 2^51. */
const ROUNDER = 6755399441055744;
const C2 = 1 / 2;
const C3 = 1 / 6;
const C4 = 1 / 24;
const C5 = 1 / 120;
/** 2^-64: the second step of the scaling into the subnormal range. */
const TWO_M64 = 2 ** -64;

/** exp(x); fast for x <= 0, Math.exp otherwise. */
export function expNonPositive(x: number): number {
  if (!(x <= 0)) return Math.exp(x);
  if (x < UNDERFLOW) return 0;
  // k = x·64/ln2 rounded to the nearest integer, as a double: adding and
  // subtracting 1.5·2^52 rounds (|x·64/ln2| < 2^17 here), faster than Math.round.
  const kf = x * INV_STEP + ROUNDER - ROUNDER;
  const r = x - kf * STEP_HI - kf * STEP_LO;
  const k = kf | 0;
  const j = k & 63;
  const n = k >> 6;
  const lead = TABLE_LEAD[j] as number;
  // exp(r) - 1 = r + r^2/2 + ... + r^5/120.
  const p = r + r * r * (C2 + r * (C3 + r * (C4 + r * C5)));
  const m = lead + ((TABLE_TRAIL[j] as number) + lead * p);
  if (n >= -1022) return m * (POW2[n + 1022] as number);
  // Subnormal result: m·2^(n+64) is exact, so only the final ·2^-64 rounds.
  return m * (POW2[n + 64 + 1022] as number) * TWO_M64;
}
