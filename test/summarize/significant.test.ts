import { describe, expect, it } from 'vitest';
import { decimalsFor, formatMeanSd, formatRateInterval } from '../../coordinator/summarize/significant.js';

// Expected strings worked by hand: the uncertainty to two significant digits, the value to the same place.
describe('numbers with their uncertainty', () => {
  it('shows the sd with two significant digits and the mean to the same decimal place', () => {
    expect(formatMeanSd(174.8333333, 0.04329)).toBe('174.833 ± 0.043');
    expect(formatMeanSd(174.8333333, 12.5)).toBe('175 ± 13');
    expect(formatMeanSd(0.000123456, 0.0000071)).toBe('0.0001235 ± 0.0000071');
    expect(formatMeanSd(-0.0004, 0.3)).toBe('0.00 ± 0.30');
  });

  it('shows a mean alone when there is no spread to judge it by', () => {
    expect(formatMeanSd(2.5, null)).toBe('2.5');
    expect(formatMeanSd(6, 0)).toBe('6 ± 0');
  });

  it('rounds a rate and its interval to two significant digits of the half-width', () => {
    // Half-width (0.8389 - 0.1611) / 2 = 0.339: two decimals.
    expect(formatRateInterval(0.5, 0.1611, 0.8389)).toBe('0.50 [0.16, 0.84]');
    // Half-width 0.0055: four decimals.
    expect(formatRateInterval(0.25, 0.2446, 0.2556)).toBe('0.2500 [0.2446, 0.2556]');
  });

  it('has no decimals for a zero or missing uncertainty', () => {
    expect(decimalsFor(0)).toBeNull();
    expect(decimalsFor(Number.NaN)).toBeNull();
    expect(decimalsFor(3)).toBe(1);
    expect(decimalsFor(0.05)).toBe(3);
  });
});
