import { describe, expect, it } from 'vitest';
import { parseFormula } from '../../shared/formula/parse-formula.js';
import { printFormula } from '../../shared/formula/print-formula.js';

function normal(text: string): string {
  const parsed = parseFormula(text);
  if (!parsed.success) throw new Error(`${text}: ${parsed.message}`);
  return printFormula(parsed.tree);
}

describe('the normalised text of a formula', () => {
  it('does not depend on spacing, redundant parentheses or how a number is spelled', () => {
    const same = [
      '10 / hypercolumns',
      '10/hypercolumns',
      ' ( 10 )/( hypercolumns ) ',
      '1e1 / hypercolumns',
      '10.0 / hypercolumns',
      '(10 / hypercolumns)',
    ];
    for (const text of same) expect(normal(text), text).toBe('10 / hypercolumns');
  });

  it('keeps the parentheses that change the meaning', () => {
    expect(normal('(a + b) * c')).toBe('(a + b) * c');
    expect(normal('a - (b - c)')).toBe('a - (b - c)');
    expect(normal('a / (b * c)')).toBe('a / (b * c)');
    expect(normal('(a ^ b) ^ c')).toBe('(a ^ b) ^ c');
    expect(normal('(-a) ^ 2')).toBe('(-a) ^ 2');
    expect(normal('-(a + b)')).toBe('-(a + b)');
    expect(normal('--a')).toBe('-(-a)');
    expect(normal('(a > 1 ? 2 : 3) * 4')).toBe('(a > 1 ? 2 : 3) * 4');
    expect(normal('a > 1 ? (b > 1 ? 4 : 5) : 6')).toBe('a > 1 ? (b > 1 ? 4 : 5) : 6');
  });

  it('drops the parentheses that do not', () => {
    expect(normal('a + (b * c)')).toBe('a + b * c');
    expect(normal('(a - b) - c')).toBe('a - b - c');
    expect(normal('a ^ (b ^ c)')).toBe('a ^ b ^ c');
    expect(normal('a > 1 ? 2 : (b > 1 ? 3 : 4)')).toBe('a > 1 ? 2 : b > 1 ? 3 : 4');
    expect(normal('max( a ,b,  1 )')).toBe('max(a, b, 1)');
  });

  it('reads back as the same tree, for every construct', () => {
    const corpus = [
      '10 / hypercolumns',
      '2 * sequenceCount * sequenceLength',
      '-(a ^ 2) + (-b) ^ 3 - c % 4',
      'a ^ b ^ c',
      '(a + 1) / (b - 1) * 2',
      'a >= 2 ? min(a, 3) : a != 1 ? max(1, 2, b) : pow(a, 0.5)',
      'round(log2(a) * 1.5e-3) + floor(sqrt(b)) - ceil(exp(c)) + abs(log(a)) + log10(b)',
      '((a > b ? a : b) - 1) * -2',
    ];
    for (const text of corpus) {
      const first = parseFormula(text);
      expect(first.success, text).toBe(true);
      if (!first.success) continue;
      const printed = printFormula(first.tree);
      const again = parseFormula(printed);
      expect(again.success, printed).toBe(true);
      if (!again.success) continue;
      expect(again.tree, printed).toEqual(first.tree);
      expect(printFormula(again.tree)).toBe(printed);
    }
  });
});
