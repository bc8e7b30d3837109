import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { expandJobs, fullParams } from '../../shared/sweep/expand.js';
import { loadSweepFile, parseSweepText } from '../../shared/sweep/load.js';

const examples = join(process.cwd(), 'examples');

describe('the network-size and capacity examples', () => {
  it('size-map: 5 x 6 points, weightGain = 10 / H at every point', async () => {
    const sweep = await loadSweepFile(join(examples, 'size-map.yaml'));
    expect(sweep.pointCount).toBe(30);
    expect(sweep.derived?.compiled.normalised).toEqual({ weightGain: '10 / hypercolumns' });
    const gains = new Map<unknown, unknown>();
    for (const job of expandJobs(sweep)) gains.set(job.params['hypercolumns'], job.params['weightGain']);
    // 10/6, 10/10, 10/16, 10/25, 10/40 by hand.
    expect([...gains]).toEqual([
      [6, 10 / 6],
      [10, 1],
      [16, 0.625],
      [25, 0.4],
      [40, 0.25],
    ]);
  });

  it('capacity-map: 2 x 6 x 6 points, recall time 200 ms per pattern', async () => {
    const sweep = await loadSweepFile(join(examples, 'capacity-map.yaml'));
    expect(sweep.pointCount).toBe(72);
    const times = new Set<string>();
    for (const job of expandJobs(sweep)) times.add(`${job.params['sequenceLength']}:${job.params['recallDuration']}`);
    expect([...times]).toEqual(['4:800', '8:1600']);
  });

  it('recalls at (H, M) = (25, 100) with the computed gain and not without it (docs/model.md, "Network size")', () => {
    // The measurement docs/model.md reports, on two trials of each: the computed
    // gain 0.4 recalls both sequences, the default gain 1 never settles.
    const text = (derived: boolean): string =>
      [
        'name: size-check',
        'fixed: { patternOverlap: 0.5, noise: 0.5, hypercolumns: 25, minicolumns: 100 }',
        derived ? 'derived: { weightGain: "10 / hypercolumns" }' : '',
      ].join('\n');
    for (const [derived, expected] of [
      [true, true],
      [false, false],
    ] as const) {
      const sweep = parseSweepText(text(derived), 'size-check.yaml');
      const params = fullParams(sweep, {});
      expect(params['weightGain']).toBe(derived ? 0.4 : 1);
      for (const seed of [1, 2]) {
        const { metrics } = sweep.model.run(params, seed);
        expect(metrics.success, `seed ${seed}, ${derived ? 'computed gain' : 'default gain'}`).toBe(expected);
        if (!derived) expect(metrics['meanCorrectPrefix']).toBe(0);
      }
    }
  });
});
