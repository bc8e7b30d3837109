import { describe, expect, it } from 'vitest';
import { gridIndexAt, gridIndices } from '../../shared/samplers/grid.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { countPoints, iteratePoints, spreadPositions } from '../../shared/sweep/points.js';
import { repeatedStepValue, type StepsRange, stepValues } from '../../shared/sweep/ranges.js';
import { runJob } from '../../worker/run-job.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const sweep = (sampler: string, vary: string, model = 'no-op'): string =>
  `name: c\nmodel: ${model}\nseed: 5\nsampler: ${sampler}\nvary:\n${vary}`;

describe('counting drawn points', () => {
  // countPoints sorts numbers instead of keeping a set of points; walking the
  // points and keeping a set of their JSON is the plain way to count them.
  const plainCount = (text: string): number =>
    new Set([...iteratePoints(parseSweepText(text, 'c.yaml'))].map((p) => JSON.stringify(p))).size;
  const cases: Array<[string, string]> = [
    [
      'few discrete values, many draws',
      sweep('{ kind: random, points: 3000 }', '  value: { among: [1, 2, 3, 4, 5] }\n'),
    ],
    [
      'whole numbers on a log scale and a list',
      sweep(
        '{ kind: lhs, points: 2000 }',
        '  tauZPre: { between: [1, 400], integer: true, scale: log }\n  overlapLength: { list: [1, 2] }\n',
        'bcpnn-sequences',
      ),
    ],
    [
      'a continuous range beside a discrete one (repeats need equal continuous values)',
      sweep(
        '{ kind: sobol, points: 4096 }',
        '  patternOverlap: { between: [0, 1] }\n  overlapLength: { among: [1, 2] }\n',
        'bcpnn-sequences',
      ),
    ],
    [
      'more combinations than a double counts exactly',
      sweep(
        '{ kind: random, points: 3000 }',
        `${['tauZPre', 'tauZPost', 'tauP', 'tauSupport', 'tauAdapt']
          .map((p) => `  ${p}: { between: [5, 2000000], integer: true }\n`)
          .join('')}  overlapLength: { among: [1, 2] }\n`,
        'bcpnn-sequences',
      ),
    ],
  ];
  for (const [title, text] of cases) {
    it(`agrees with a set of the points for ${title}`, () => {
      const loaded = parseSweepText(text, 'c.yaml');
      expect(countPoints(loaded).count).toBe(plainCount(text));
      expect(loaded.pointCount).toBe(plainCount(text));
    });
  }

  it('finds the 5 values of among in 3000 draws, and all 4 of a Sobol dimension in 8', () => {
    expect(parseSweepText(cases[0]![1], 'c.yaml').pointCount).toBe(5);
    // Sobol's first dimension is k/8 for k = 0..7 over the first 8 points (van der Corput, see samplers.test.ts).
    const sobol = parseSweepText(sweep('{ kind: sobol, points: 8 }', '  value: { among: [1, 2, 3, 4] }\n'), 'c.yaml');
    expect(sobol.pointCount).toBe(4);
  });

  it('drops the repeated draws where a continuous value repeats after rounding to 12 digits', () => {
    // [1, 1 + 1e-9) holds only about 1000 values of 12 significant digits, so 3000 draws repeat many.
    const text = sweep(
      '{ kind: random, points: 3000 }',
      '  patternOverlap: { between: [0.5, 0.500000001] }\n  overlapLength: { among: [1] }\n',
      'bcpnn-sequences',
    );
    const count = plainCount(text);
    expect(count).toBeLessThan(3000);
    expect(parseSweepText(text, 'c.yaml').pointCount).toBe(count);
  });

  it('hands back the first points along with the count, the same as iteratePoints', () => {
    const loaded = parseSweepText(cases[1]![1], 'c.yaml');
    const { leading } = countPoints(loaded, 10);
    expect(leading).toEqual([...iteratePoints(loaded)].slice(0, 10));
  });
});

describe('repeated grid values', () => {
  // The plain check: every value, and a set of them.
  const plainRepeat = (range: StepsRange): number | undefined => {
    const seen = new Set<number>();
    for (const v of stepValues(range)) {
      if (seen.has(v)) return v;
      seen.add(v);
    }
    return undefined;
  };
  const ranges: StepsRange[] = [
    { from: 1, to: 1.000000000001, steps: 5, scale: 'linear' },
    { from: 1, to: 1.0000001, steps: 100_000, scale: 'linear' },
    { from: 0, to: 1, steps: 100_000, scale: 'linear' },
    { from: 0, to: 1e-7, steps: 100_000, scale: 'linear' },
    { from: 1e12, to: 1e12 + 1e5, steps: 100_000, scale: 'linear' },
    { from: 1e12, to: 1e12 + 9e4, steps: 100_000, scale: 'linear' },
    { from: -3, to: 5, steps: 7, scale: 'linear' },
    { from: 1, to: 1.000001, steps: 100_000, scale: 'log' },
    { from: 1, to: 10, steps: 100_000, scale: 'log' },
    { from: 5, to: 1, steps: 50, scale: 'linear' },
  ];
  for (const range of ranges) {
    it(`agrees with a set of all values for ${range.steps} ${range.scale} steps from ${range.from} to ${range.to}`, () => {
      expect(repeatedStepValue(range)).toBe(plainRepeat(range));
    });
  }
});

describe('grid positions', () => {
  it('computes the index tuple at a position as gridIndices lists it', () => {
    const sizes = [3, 1, 4, 2];
    const listed = [...gridIndices(sizes)];
    expect(listed).toHaveLength(24);
    for (const [position, index] of listed.entries()) expect(gridIndexAt(sizes, position)).toEqual(index);
  });

  it('spreads positions evenly from the first, without repeats', () => {
    expect(spreadPositions(10, 4)).toEqual([0, 2, 5, 7]);
    expect(spreadPositions(3, 10)).toEqual([0, 1, 2]);
  });
});

describe('a point of a large sweep that loading did not check', () => {
  it('becomes jobs that fail as invalid instead of stopping the expansion', () => {
    // epochs takes whole numbers. A list of 5000 values has more points than
    // loading checks; the one fractional value is moved along until it sits
    // at a point that was not checked.
    const make = (bad: number): string =>
      `name: u\nvary:\n  epochs: { list: [${Array.from({ length: 5000 }, (_, i) => (i === bad ? 2.5 + i : i + 1)).join(', ')}] }\n`;
    let bad = 4000;
    let loaded: ReturnType<typeof parseSweepText> | undefined;
    for (; bad < 5000 && loaded === undefined; bad++) {
      try {
        loaded = parseSweepText(make(bad), 'u.yaml');
      } catch {
        // Checked, and refused: try the next position.
      }
    }
    if (loaded === undefined) throw new Error('every position was checked');
    expect(loaded.checkedPoints).toBeLessThan(loaded.pointCount);
    const jobs = [...expandJobs(loaded)];
    expect(jobs).toHaveLength(5000);
    const job = jobs.find((j) => !Number.isInteger(j.point['epochs']));
    expect(job?.params).toEqual({ epochs: job?.point['epochs'] });
    const outcome = runJob(toPayload(loaded, job!), { writer: 'w', run: 'r' });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) {
      expect(outcome.kind).toBe('invalid');
      expect(outcome.retryable).toBe(false);
      expect(outcome.message).toContain('epochs');
    }
  });

  it('gives a computed parameter whose formula fails there no value, so the job fails as invalid instead of running with a default', () => {
    const make = (bad: number): string =>
      `name: u\nvary:\n  epochs: { list: [${Array.from({ length: 5000 }, (_, i) => i + 1).join(', ')}] }\nderived:\n  weightGain: "1 / abs(epochs - ${bad})"\n`;
    let bad = 3999;
    let loaded: ReturnType<typeof parseSweepText> | undefined;
    while (loaded === undefined && bad < 5000) {
      bad++;
      try {
        loaded = parseSweepText(make(bad), 'u.yaml');
      } catch {
        // The failing point was checked: try the next one.
      }
    }
    if (loaded === undefined) throw new Error('every position was checked');
    const job = [...expandJobs(loaded)].find((j) => j.params['weightGain'] === null);
    expect(job?.point['epochs']).toBe(bad);
    const outcome = runJob(toPayload(loaded, job!), { writer: 'w', run: 'r' });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.kind).toBe('invalid');
  });
});
