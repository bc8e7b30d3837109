import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { jobKey } from '../../shared/job-identity.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText, sweepFromStored } from '../../shared/sweep/load.js';

const SIZE = [
  'name: size',
  'seed: 3',
  'replicates: 2',
  'fixed: { noise: 0.5 }',
  'vary:',
  '  hypercolumns: { list: [10, 25] }',
  '  minicolumns: { list: [20, 100] }',
  'derived:',
  '  weightGain: "10 / hypercolumns"',
].join('\n');

function load(text: string): LoadedSweep {
  return parseSweepText(text, 'derived.yaml');
}

function rejection(text: string): InputError {
  try {
    load(text);
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return error as InputError;
  }
  throw new Error('expected an InputError, got none');
}

function withDerived(lines: string[], extra = ''): string {
  return [
    'name: d',
    'vary:',
    '  hypercolumns: { list: [10, 25] }',
    extra,
    'derived:',
    ...lines.map((l) => `  ${l}`),
  ].join('\n');
}

describe('a sweep with computed parameters', () => {
  it('gives every job the evaluated numbers and keeps the point to the varied values', () => {
    const sweep = load(SIZE);
    const jobs = [...expandJobs(sweep)];
    expect(jobs).toHaveLength(8);
    for (const job of jobs) {
      const H = job.point['hypercolumns'] as number;
      expect(Object.keys(job.point)).toEqual(['hypercolumns', 'minicolumns']);
      // 10 / H by hand: 1 at H = 10, 0.4 at H = 25 (the gain docs/model.md gives for (25, 100)).
      expect(job.params['weightGain']).toBe(H === 10 ? 1 : 0.4);
      expect(job.params['noise']).toBe(0.5);
      expect(job.key).toBe(jobKey('bcpnn-sequences', sweep.model.version, job.params, job.replicate));
      // A worker gets plain parameters: nothing in the payload refers to formulas.
      const payload = toPayload(sweep, job);
      expect(payload.params['weightGain']).toBe(job.params['weightGain']);
      expect(JSON.stringify(payload)).not.toContain('/ hypercolumns');
      expect(Object.keys(payload)).not.toContain('derived');
    }
  });

  it('gives the same job keys as the same values written out in fixed', () => {
    const computed = [...expandJobs(load(SIZE.replace('{ list: [10, 25] }', '{ list: [25] }')))].map((j) => j.key);
    const written = [
      ...expandJobs(
        load(
          SIZE.replace('{ list: [10, 25] }', '{ list: [25] }')
            .replace('fixed: { noise: 0.5 }', 'fixed: { noise: 0.5, weightGain: 0.4 }')
            .replace(/derived:\n.*$/, ''),
        ),
      ),
    ].map((j) => j.key);
    expect(computed).toEqual(written);
  });

  it('evaluates chains of computed parameters in dependency order', () => {
    const sweep = load(
      [
        'name: chain',
        'vary:',
        '  sequenceCount: { list: [1, 2, 4] }',
        'fixed: { sequenceLength: 5 }',
        'derived:',
        '  recallDuration: "sequenceLength * 200"',
        '  minicolumns: "max(2 * sequenceCount * sequenceLength, 20)"',
        '  cueDuration: "recallDuration / 20"',
      ].join('\n'),
    );
    const params = [...expandJobs(sweep)].map((j) => [
      j.params['minicolumns'],
      j.params['recallDuration'],
      j.params['cueDuration'],
    ]);
    // By hand: M = max(2*K*5, 20) = 20, 20, 40; recallDuration 1000; cue 50.
    expect(params).toEqual([
      [20, 1000, 50],
      [20, 1000, 50],
      [40, 1000, 50],
    ]);
  });

  it('stores the formulas in sweep.json and reloads to the same hash', () => {
    const sweep = load(SIZE);
    expect(sweep.spec.derived).toEqual({ weightGain: '10 / hypercolumns' });
    const stored = {
      format: 'recallscape-sweep/1',
      hash: sweep.hash,
      codeVersion: 'test',
      createdAt: '2026-01-01T00:00:00.000Z',
      source: 'size.yaml',
      sweep: JSON.parse(JSON.stringify(sweep.spec)) as Record<string, unknown>,
    };
    const again = sweepFromStored(stored);
    expect(again.hash).toBe(sweep.hash);
    expect(again.derived?.compiled.normalised).toEqual({ weightGain: '10 / hypercolumns' });
  });
});

describe('the sweep hash and computed parameters', () => {
  it('does not change when only the spacing or redundant parentheses of a formula change', () => {
    const base = load(SIZE).hash;
    expect(load(SIZE.replace('"10 / hypercolumns"', '"10/hypercolumns"')).hash).toBe(base);
    expect(load(SIZE.replace('"10 / hypercolumns"', '"( 10 ) / (hypercolumns)"')).hash).toBe(base);
    expect(load(SIZE.replace('"10 / hypercolumns"', "'10 /   hypercolumns'")).hash).toBe(base);
  });

  it('changes when a formula changes', () => {
    const base = load(SIZE).hash;
    const changed = [
      '"12 / hypercolumns"',
      '"10 / minicolumns"',
      '"round(10 / hypercolumns)"',
      '"hypercolumns / 10"',
    ].map((f) => load(SIZE.replace('"10 / hypercolumns"', f)).hash);
    for (const h of changed) expect(h).not.toBe(base);
    expect(new Set(changed).size).toBe(changed.length);
    expect(load(`${SIZE}\n  adaptGain: "2"`).hash).not.toBe(base);
  });

  it('is the same for an empty derived section and none', () => {
    const without = SIZE.replace(/derived:\n.*$/, '');
    expect(load(`${without}\nderived: {}`).hash).toBe(load(without).hash);
  });
});

describe('refusals at load time, at derived.<name>', () => {
  it('refuses a cycle, naming it', () => {
    const e = rejection(withDerived(['weightGain: "adaptGain / 2"', 'adaptGain: "weightGain * 2"']));
    expect(e.issues).toEqual([
      {
        path: 'derived.weightGain',
        message: 'computed parameters form a cycle: weightGain -> adaptGain -> weightGain',
      },
    ]);
    expect(e.message).toContain('derived.weightGain: computed parameters form a cycle');
  });

  it('refuses an unknown name with the closest known names', () => {
    const e = rejection(withDerived(['weightGain: "10 / hypercolums"']));
    expect(e.issues[0]).toEqual({
      path: 'derived.weightGain',
      message: 'unknown name "hypercolums" in the formula; did you mean hypercolumns?',
    });
  });

  it('refuses a non-finite value, naming the point', () => {
    const e = rejection(withDerived(['weightGain: "10 / (hypercolumns - 10)"']));
    expect(e.issues).toEqual([
      {
        path: 'derived.weightGain',
        message:
          'at point 1 (hypercolumns=10): 10 / (hypercolumns - 10) gives Infinity; every value in a formula must be a finite number',
      },
    ]);
  });

  it('refuses a fractional value for a whole-number parameter: the formula must round', () => {
    const e = rejection(withDerived(['minicolumns: "hypercolumns / 2"']));
    // 25 / 2 = 12.5 minicolumns.
    expect(e.issues).toEqual([
      {
        path: 'derived.minicolumns',
        message:
          'at point 2 (hypercolumns=25): the formula gives 12.5; minicolumns must be an integer >= 2 and <= 20000 (the formula must give a whole number: wrap it in round(), floor() or ceil())',
      },
    ]);
    expect(load(withDerived(['minicolumns: "round(hypercolumns / 2)"'])).pointCount).toBe(2);
  });

  it('refuses a value the model forbids, and cross-field rules that a computed value breaks', () => {
    expect(rejection(withDerived(['weightGain: "-1 / hypercolumns"'])).issues[0]).toEqual({
      path: 'derived.weightGain',
      message:
        'at point 1 (hypercolumns=10): the formula gives -0.1; weightGain must be a finite number >= 0 and <= 1000000000000',
    });
    // overlapLength <= sequenceLength - 1 (docs/model.md).
    const e = rejection(withDerived(['overlapLength: "hypercolumns"'], 'fixed: { sequenceLength: 8 }'));
    expect(e.issues[0]?.path).toBe('derived.overlapLength');
    expect(e.issues[0]?.message).toMatch(
      /^at point 1 \(hypercolumns=10\): the formula gives 10; overlapLength must be <= sequenceLength - 1 \(7\)/,
    );
  });

  it('refuses a computed parameter that is also fixed or varied', () => {
    expect(rejection(withDerived(['weightGain: "1"'], 'fixed: { weightGain: 2 }')).issues).toEqual([
      {
        path: 'derived.weightGain',
        message: '"weightGain" is computed and also fixed; keep it in one of derived, fixed',
      },
    ]);
    expect(rejection(withDerived(['hypercolumns: "12"'])).issues).toEqual([
      {
        path: 'derived.hypercolumns',
        message: '"hypercolumns" is computed and also varied; keep it in one of derived, vary',
      },
    ]);
  });

  it('refuses unknown computed parameters, including __proto__ and constructor', () => {
    expect(rejection(withDerived(['weightgain: "1"'])).issues[0]?.path).toBe('derived.weightgain');
    expect(rejection(withDerived(['__proto__: "1"'])).issues).toEqual([
      {
        path: 'derived.__proto__',
        message:
          'unknown parameter "__proto__" of model bcpnn-sequences; known parameters: hypercolumns, minicolumns, sequenceCount, sequenceLength, patternOverlap, overlapLength, overlapStart, sequences, dt, tauZPre, ...',
      },
    ]);
    const json = JSON.stringify({ name: 'd', derived: { constructor: '1' } });
    expect(rejection(json).issues[0]).toMatchObject({ path: 'derived.constructor' });
    const proto = '{"name": "d", "derived": {"__proto__": "1"}}';
    expect(rejection(proto).issues[0]).toMatchObject({ path: 'derived.__proto__' });
  });

  it('refuses a formula that is not a text, and a formula over the length limit', () => {
    expect(rejection(withDerived(['weightGain: 0.4'])).issues[0]).toEqual({
      path: 'derived.weightGain',
      message: 'a formula is a text, e.g. "10 / hypercolumns"',
    });
    const long = `1${' + 1'.repeat(30_000)}`;
    // As JSON: a YAML sweep file may have at most 32 KiB.
    const json = JSON.stringify({
      name: 'd',
      vary: { hypercolumns: { list: [10, 25] } },
      derived: { weightGain: long },
    });
    expect(rejection(json).issues[0]).toEqual({
      path: 'derived.weightGain',
      message: 'a formula has at most 1000 characters',
    });
  });

  it('refuses a formula that reads a default the model resolves otherwise', () => {
    const text = [
      'name: d',
      'fixed:',
      '  sequences: [[[0, 1, 2], [1, 2, 3]], [[2, 3, 4], [3, 4, 5]]]',
      'derived:',
      '  recallDuration: "hypercolumns * 100"',
    ].join('\n');
    expect(rejection(text).issues[0]).toEqual({
      path: 'derived.recallDuration',
      message:
        "the formula read hypercolumns = 10 (the model's default), but the model resolves hypercolumns to 3 here; set hypercolumns in fixed or vary",
    });
  });
});
