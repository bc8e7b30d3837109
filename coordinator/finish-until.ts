import { InputError } from '../shared/errors.js';

const UNIT_MS: Readonly<Record<string, number>> = { s: 1_000, m: 60_000, h: 3_600_000, d: 86_400_000 };
/** A week: longer waits belong to a scheduler, and a typo like 9999h should not pass. */
const MAX_WAIT_MS = 7 * UNIT_MS['d']!;

/**
 * `--until`: when to stop following, as epoch milliseconds. Accepts a span
 * from now (`90s`, `45m`, `2h`, `1h30m`, `1d`), a clock time (`18:30`: today,
 * or tomorrow if that has passed, in local time) or an ISO 8601 date-time
 * (`2026-12-02T18:30`, with `Z` or an offset for another zone). Bad or past
 * values are an InputError naming --until.
 */
export function parseUntil(text: string, now: number): number {
  const raw = text.trim();
  const refuse = (why: string): never => {
    const message = `--until: ${why} (got "${text}"); give a span such as 45m or 2h, a clock time such as 18:30, or a date-time such as 2026-12-02T18:30`;
    throw new InputError(message, [{ path: '--until', message: why }]);
  };
  let at: number | undefined;
  if (/^(\d{1,6}[smhd])+$/.test(raw)) {
    let span = 0;
    for (const [, n, unit] of raw.matchAll(/(\d+)([smhd])/g)) span += Number(n) * (UNIT_MS[unit ?? ''] ?? 0);
    if (span <= 0) refuse('the span must be longer than zero');
    at = now + span;
  } else if (/^\d{1,2}:\d{2}$/.test(raw)) {
    const [h, m] = raw.split(':').map(Number) as [number, number];
    if (h > 23 || m > 59) refuse('not a clock time');
    const day = new Date(now);
    day.setHours(h, m, 0, 0);
    if (day.getTime() <= now) day.setDate(day.getDate() + 1);
    at = day.getTime();
  } else if (/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})?$/.test(raw)) {
    at = Date.parse(raw);
    if (!Number.isFinite(at)) refuse('not a valid date-time');
    if (at <= now) refuse('that time has passed');
  } else {
    refuse('not a span, a clock time or a date-time');
  }
  if (at === undefined || at - now > MAX_WAIT_MS) refuse('at most a week from now');
  return at as number;
}
