import { describe, expect, it } from 'vitest';
import { parseUntil } from '../../coordinator/finish-until.js';
import { InputError } from '../../shared/errors.js';

// Check values are plain arithmetic on milliseconds (common practice, no source).
const NOW = Date.UTC(2026, 11, 2, 10, 0, 0);

describe('--until', () => {
  it('reads a span from now in seconds, minutes, hours, days and their sums', () => {
    expect(parseUntil('90s', NOW)).toBe(NOW + 90_000);
    expect(parseUntil('45m', NOW)).toBe(NOW + 45 * 60_000);
    expect(parseUntil('2h', NOW)).toBe(NOW + 2 * 3_600_000);
    expect(parseUntil('1h30m', NOW)).toBe(NOW + 90 * 60_000);
    expect(parseUntil('1d', NOW)).toBe(NOW + 24 * 3_600_000);
  });

  it('reads a clock time as the next time the local clock shows it', () => {
    const now = new Date(2026, 11, 2, 10, 0, 0).getTime();
    expect(parseUntil('18:30', now)).toBe(new Date(2026, 11, 2, 18, 30, 0).getTime());
    // 09:15 has passed today: tomorrow's.
    expect(parseUntil('09:15', now)).toBe(new Date(2026, 11, 3, 9, 15, 0).getTime());
  });

  it('reads an ISO 8601 date-time with a zone', () => {
    expect(parseUntil('2026-12-02T18:30Z', NOW)).toBe(Date.UTC(2026, 11, 2, 18, 30));
    expect(parseUntil('2026-12-02T18:30:00+01:00', NOW)).toBe(Date.UTC(2026, 11, 2, 17, 30));
  });

  it('refuses a past time, a zero span, more than a week and words, naming --until', () => {
    for (const text of ['2026-12-01T10:00Z', '0m', '8d', '200h', 'tomorrow', '25:00', '', '5 minutes']) {
      let error: unknown;
      try {
        parseUntil(text, NOW);
      } catch (e) {
        error = e;
      }
      expect(error, text).toBeInstanceOf(InputError);
      expect((error as Error).message, text).toMatch(/^--until: /);
    }
  });
});
