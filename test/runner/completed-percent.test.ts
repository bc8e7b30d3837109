import { describe, expect, it } from 'vitest';
import { completedPercent } from '../../coordinator/completed-percent.js';

// Expected strings worked by hand: the share rounded DOWN to one decimal.
describe('completedPercent', () => {
  it('shows 9999 of 10000 as 99.9%, not 100.0%', () => {
    expect(completedPercent(9999, 10_000)).toBe('99.9%');
    expect(completedPercent(999_999, 1_000_000)).toBe('99.9%');
  });

  it('shows 100.0% only when every job is done', () => {
    expect(completedPercent(10_000, 10_000)).toBe('100.0%');
    expect(completedPercent(1, 1)).toBe('100.0%');
  });

  it('rounds down rather than to the nearest tenth', () => {
    // 57 / 88 = 0.64772..., 2 / 3 = 0.66666...
    expect(completedPercent(57, 88)).toBe('64.7%');
    expect(completedPercent(2, 3)).toBe('66.6%');
    expect(completedPercent(1, 3)).toBe('33.3%');
    expect(completedPercent(1, 10_000)).toBe('0.0%');
    expect(completedPercent(0, 5)).toBe('0.0%');
    expect(completedPercent(44, 88)).toBe('50.0%');
  });

  it('treats a sweep with no planned jobs as complete and never goes past 100.0%', () => {
    expect(completedPercent(0, 0)).toBe('100.0%');
    expect(completedPercent(12, 10)).toBe('100.0%');
  });
});
