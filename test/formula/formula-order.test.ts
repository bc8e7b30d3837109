import { describe, expect, it } from 'vitest';
import { formulaOrder } from '../../shared/formula/formula-order.js';

function order(entries: Array<[string, string[]]>) {
  return formulaOrder(new Map(entries));
}

describe('the order of computed parameters', () => {
  it('keeps file order when no formula reads another', () => {
    expect(
      order([
        ['c', ['x']],
        ['a', ['y']],
        ['b', []],
      ]),
    ).toEqual({ success: true, order: ['c', 'a', 'b'] });
  });

  it('puts every formula after the computed parameters it reads', () => {
    // recallDuration reads sequenceLength, which reads minicolumns: written in the opposite order.
    const result = order([
      ['recallDuration', ['sequenceLength']],
      ['sequenceLength', ['minicolumns', 'sequenceCount']],
      ['minicolumns', ['hypercolumns']],
    ]);
    expect(result).toEqual({ success: true, order: ['minicolumns', 'sequenceLength', 'recallDuration'] });
  });

  it('orders a diamond with each name once', () => {
    const result = order([
      ['d', ['b', 'c']],
      ['b', ['a']],
      ['c', ['a']],
      ['a', []],
    ]);
    expect(result).toEqual({ success: true, order: ['a', 'b', 'c', 'd'] });
  });

  it('names a cycle of two as a -> b -> a', () => {
    expect(
      order([
        ['a', ['b']],
        ['b', ['a']],
      ]),
    ).toEqual({ success: false, cycle: ['a', 'b', 'a'] });
  });

  it('names a formula that reads itself', () => {
    expect(order([['a', ['a']]])).toEqual({ success: false, cycle: ['a', 'a'] });
  });

  it('names only the cycle, not the path that led into it', () => {
    expect(
      order([
        ['x', ['a']],
        ['a', ['b']],
        ['b', ['c']],
        ['c', ['a']],
      ]),
    ).toEqual({
      success: false,
      cycle: ['a', 'b', 'c', 'a'],
    });
  });
});
