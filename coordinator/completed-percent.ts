/**
 * "99.9%": the share of planned jobs that are done, rounded DOWN to one
 * decimal, so a sweep reads 100.0% only when every job is done (9999 of
 * 10000 is 99.9%, not 100.0%). A sweep with no planned jobs has nothing left
 * to do and reads 100.0%. Integer arithmetic on tenths keeps the floor exact.
 */
export function completedPercent(done: number, planned: number): string {
  if (planned <= 0) return '100.0%';
  const tenths = Math.min(1000, Math.max(0, Math.floor((1000 * done) / planned)));
  return `${Math.floor(tenths / 10)}.${tenths % 10}%`;
}
