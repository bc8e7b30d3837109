import { Writable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { createProgressDisplay, formatDuration, progressLine } from '../../coordinator/progress-display.js';
import type { RunProgress } from '../../coordinator/run-sweep.js';

function capture(): { stream: Writable; text: () => string } {
  const chunks: string[] = [];
  const stream = new Writable({
    write(chunk: Buffer, _enc, done) {
      chunks.push(chunk.toString());
      done();
    },
  });
  return { stream, text: () => chunks.join('') };
}

const at = (succeeded: number, failed = 0): RunProgress => ({
  planned: 50,
  alreadyDone: 10,
  toRun: 40,
  succeeded,
  failed,
  running: 2,
});

describe('progress display', () => {
  // Expected figures below are plain arithmetic on the inputs (common practice, no source).
  it('writes a plain line with count, percent, rate and time left', () => {
    expect(progressLine(at(9, 1), 5)).toBe('progress: 10/40 jobs (25%), 2.0 jobs/s, elapsed 5s, left ~15s, errors 1');
  });

  it('prints plain lines no more often than the interval, and a last line when stopped', () => {
    const out = capture();
    let clock = 100;
    const display = createProgressDisplay({ stream: out.stream, mode: 'lines', intervalSeconds: 5, now: () => clock });
    clock = 101;
    display.update(at(2));
    clock = 104.9;
    display.update(at(4));
    clock = 105;
    display.update(at(5));
    clock = 107;
    display.update(at(6));
    clock = 110;
    display.stop(at(40));
    const lines = out.text().trimEnd().split('\n');
    expect(lines).toEqual([
      'progress: 5/40 jobs (12%), 1.0 jobs/s, elapsed 5s, left ~35s, errors 0',
      'progress: 40/40 jobs (100%), 4.0 jobs/s, elapsed 10s, left ~0s, errors 0',
    ]);
  });

  it('draws a bar with rate and time left in bar mode', () => {
    const out = capture();
    let clock = 0;
    const display = createProgressDisplay({ stream: out.stream, mode: 'bar', now: () => clock });
    clock = 10;
    display.update(at(20));
    display.stop(at(20));
    expect(out.text()).toContain('20/40');
    expect(out.text()).toContain('2.0 jobs/s');
    expect(out.text()).toContain('left ~10s');
  });

  it('formats durations in seconds, minutes and hours', () => {
    expect([formatDuration(42), formatDuration(245), formatDuration(3720)]).toEqual(['42s', '4m 05s', '1h 02m']);
  });
});
