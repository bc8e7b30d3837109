import { describe, expect, it } from 'vitest';
import { CalibrationRunner } from '../../coordinator/calibration-runner.js';
import { parseSweepText } from '../../shared/sweep/load.js';

// A shape inside the model's limits that runs for many seconds (issue 9: over five minutes at H = 250).
const SLOW = `name: slow
fixed: { hypercolumns: 250, minicolumns: 20, sequenceCount: 64, sequenceLength: 4 }
vary: { patternOverlap: { list: [0.1] } }
`;
const QUICK = `name: quick
fixed: { hypercolumns: 4, minicolumns: 8, sequenceLength: 3 }
vary: { patternOverlap: { list: [0.5] } }
`;

describe('timing jobs for plan and submit', () => {
  it('stops a timing job of a built-in model at the limit and says so, and times the next one on a fresh thread', async () => {
    const sweep = parseSweepText(SLOW, 'slow.yaml');
    const runner = new CalibrationRunner(sweep, 300);
    try {
      const timed = await runner.time({ patternOverlap: 0.1 });
      expect(timed).toEqual({
        ok: false,
        overLimit: true,
        message: "ran longer than 0.3 s and was stopped; this sweep's trials take at least that long",
      });
    } finally {
      await runner.close();
    }
    const quick = parseSweepText(QUICK, 'quick.yaml');
    const other = new CalibrationRunner(quick, 60_000);
    try {
      const timed = await other.time({ patternOverlap: 0.5 });
      expect(timed.ok).toBe(true);
      expect(timed.ok && timed.seconds).toBeGreaterThan(0);
    } finally {
      await other.close();
    }
  });
});
