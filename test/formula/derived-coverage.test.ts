import { describe, expect, it } from 'vitest';
import { derivedSetup } from '../../shared/formula/derive-point.js';
import {
  checkFormulaCombinations,
  describeInputs,
  gridCombinations,
  variedInputs,
} from '../../shared/formula/derived-coverage.js';
import { compileDerived } from '../../shared/formula/derived-params.js';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import type { Range } from '../../shared/sweep/ranges.js';

const KNOWN = Object.keys(bcpnnSequences.params.shape);
const DEFAULTS = bcpnnSequences.params.parse({}) as Record<string, unknown>;

function setup(raw: Record<string, string>, varied: string[], fixed: string[] = []) {
  const result = compileDerived(raw, { known: KNOWN, fixed, varied });
  if (!result.success) throw new Error(JSON.stringify(result.issues));
  return derivedSetup(result.derived, DEFAULTS, fixed, varied);
}

const steps = (from: number, to: number, n: number): Range => ({ from, to, steps: n, scale: 'linear' });

describe('which varied parameters the formulas depend on', () => {
  it('follows computed parameters to the varied ones they read', () => {
    const s = setup({ recallDuration: 'cueDuration * 20', cueDuration: 'sequenceLength * 10' }, [
      'tauZPre',
      'sequenceLength',
      'noise',
    ]);
    expect(variedInputs(s, ['tauZPre', 'sequenceLength', 'noise'])).toEqual(['sequenceLength']);
  });
});

describe('combinations of the values formulas read', () => {
  it('lists every combination in grid order, first name slowest', () => {
    const vary = { hypercolumns: { list: [6, 10] }, minicolumns: steps(10, 30, 3) } as Record<string, Range>;
    expect(gridCombinations(vary, ['hypercolumns', 'minicolumns'])).toEqual([
      { hypercolumns: 6, minicolumns: 10 },
      { hypercolumns: 6, minicolumns: 20 },
      { hypercolumns: 6, minicolumns: 30 },
      { hypercolumns: 10, minicolumns: 10 },
      { hypercolumns: 10, minicolumns: 20 },
      { hypercolumns: 10, minicolumns: 30 },
    ]);
    expect(gridCombinations(vary, [])).toEqual([{}]);
  });

  it('gives up beyond its budget', () => {
    const vary = { a: steps(0, 1, 1000), b: steps(0, 1, 1000) } as Record<string, Range>;
    expect(gridCombinations(vary, ['a', 'b'], 999_999)).toBeUndefined();
    expect(gridCombinations(vary, ['a'], 999_999)).toHaveLength(1000);
  });
});

describe('checking formulas at every combination', () => {
  it('covers a grid of five million points with five evaluations', () => {
    const s = setup({ minicolumns: 'hypercolumns * 2.5' }, ['hypercolumns', 'noise']);
    const vary = { hypercolumns: { list: [2, 4, 5, 8, 9] }, noise: steps(0, 1, 1_000_000) } as Record<string, Range>;
    const combos = gridCombinations(vary, variedInputs(s, ['hypercolumns', 'noise']));
    expect(combos).toHaveLength(5);
    const coverage = checkFormulaCombinations(s, bcpnnSequences, {}, combos!);
    // 2.5 H is whole for even H only: 5 and 9 give 12.5 and 22.5.
    expect(coverage.checked).toBe(5);
    expect(coverage.failing).toBe(2);
    expect(coverage.failures).toEqual([
      {
        name: 'minicolumns',
        at: { hypercolumns: 5 },
        message:
          'the formula gives 12.5; minicolumns must be an integer >= 2 and <= 20000 (the formula must give a whole number: wrap it in round(), floor() or ceil())',
      },
      {
        name: 'minicolumns',
        at: { hypercolumns: 9 },
        message:
          'the formula gives 22.5; minicolumns must be an integer >= 2 and <= 20000 (the formula must give a whole number: wrap it in round(), floor() or ceil())',
      },
    ]);
  });

  it('reports a non-finite value where it arises, reading fixed values too', () => {
    const s = setup({ weightGain: 'tauZPre / (hypercolumns - gain)' }, ['hypercolumns'], ['gain']);
    const coverage = checkFormulaCombinations(s, bcpnnSequences, { gain: 6 }, [
      { hypercolumns: 5 },
      { hypercolumns: 6 },
    ]);
    expect(coverage.failures).toEqual([
      {
        name: 'weightGain',
        at: { hypercolumns: 5 },
        message: 'the formula gives -50; weightGain must be a finite number >= 0 and <= 1000000000000',
      },
      {
        name: 'weightGain',
        at: { hypercolumns: 6 },
        message: 'tauZPre / (hypercolumns - gain) gives Infinity; every value in a formula must be a finite number',
      },
    ]);
  });

  it('names the values a failure happened at', () => {
    expect(describeInputs({ hypercolumns: 25, minicolumns: 100 })).toBe('hypercolumns=25, minicolumns=100');
    expect(describeInputs({})).toBe('every point');
  });
});
