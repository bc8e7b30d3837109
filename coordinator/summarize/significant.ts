import { formatNumber } from './axis.js';

/** Most decimals ever shown; beyond this the uncertainty is below double precision for most values. */
const MAX_DECIMALS = 8;

/**
 * Decimals that show an uncertainty to two significant digits (common
 * practice, no source: the value is then rounded to the same place, so it
 * never claims more precision than its spread allows). Null for an
 * uncertainty of zero or not a number.
 */
export function decimalsFor(uncertainty: number): number | null {
  if (!(Number.isFinite(uncertainty) && uncertainty > 0)) return null;
  const d = 1 - Math.floor(Math.log10(uncertainty));
  return Math.min(MAX_DECIMALS, Math.max(0, d));
}

function fixed(value: number, decimals: number): string {
  const text = value.toFixed(decimals);
  // "-0.00" reads like a sign that means something.
  return /^-0\.?0*$/.test(text) ? text.slice(1) : text;
}

/** "174.833 ± 0.043": the sd to two significant digits, the mean to the same place. */
export function formatMeanSd(mean: number, sd: number | null): string {
  const d = sd === null ? null : decimalsFor(sd);
  if (sd === null || d === null) return sd === 0 ? `${formatNumber(mean)} ± 0` : formatNumber(mean);
  return `${fixed(mean, d)} ± ${fixed(sd, d)}`;
}

/** "0.50 [0.15, 0.85]": a rate and its interval, to two significant digits of the interval's half-width. */
export function formatRateInterval(rate: number, lo: number, hi: number): string {
  const d = decimalsFor((hi - lo) / 2) ?? 3;
  return `${fixed(rate, d)} [${fixed(lo, d)}, ${fixed(hi, d)}]`;
}
