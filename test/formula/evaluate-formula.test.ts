import { describe, expect, it } from 'vitest';
import { evaluateFormula, type FormulaScope } from '../../shared/formula/evaluate-formula.js';
import { parseFormula } from '../../shared/formula/parse-formula.js';

const VALUES: Record<string, number> = { hypercolumns: 25, minicolumns: 100, a: 2, b: 3, big: 1e200 };

const scope: FormulaScope = (name) =>
  Object.hasOwn(VALUES, name) ? { value: VALUES[name]! } : { missing: `no value for ${name}` };

function value(text: string): number {
  const parsed = parseFormula(text);
  if (!parsed.success) throw new Error(`${text}: ${parsed.message}`);
  const result = evaluateFormula(parsed.tree, scope);
  if (!result.success) throw new Error(`${text}: ${result.message}`);
  return result.value;
}

function failure(text: string): string {
  const parsed = parseFormula(text);
  if (!parsed.success) throw new Error(`${text}: ${parsed.message}`);
  const result = evaluateFormula(parsed.tree, scope);
  if (result.success) throw new Error(`${text}: expected a failure, got ${result.value}`);
  return result.message;
}

describe('evaluating formulas', () => {
  it('scales a gain as 10 / H: 0.4 at H = 25, the gain that recalls at (25, 100) in docs/model.md', () => {
    expect(value('10 / hypercolumns')).toBe(0.4);
  });

  it('computes arithmetic by the usual rules (school arithmetic, from memory)', () => {
    expect(value('1 + 2 * 3')).toBe(7);
    expect(value('(1 + 2) * 3')).toBe(9);
    expect(value('10 - 4 - 3')).toBe(3);
    expect(value('2 * 3 ^ 2')).toBe(18);
    expect(value('2 ^ 3 ^ 2')).toBe(512); // 2^(3^2), not (2^3)^2 = 64
    expect(value('(2 ^ 3) ^ 2')).toBe(64);
    expect(value('2 ^ -1')).toBe(0.5);
    expect(value('(-3) ^ 2')).toBe(9);
    expect(value('-(3 ^ 2)')).toBe(-9);
    expect(value('-a * b')).toBe(-6);
    expect(value('-(-a)')).toBe(2);
    expect(value('1e3 / 8')).toBe(125);
  });

  it('takes % as the remainder with the sign of the left side (C and JavaScript semantics, common practice)', () => {
    expect(value('7 % 3')).toBe(1);
    expect(value('-7 % 3')).toBe(-1);
    expect(value('7 % -3')).toBe(1);
    expect(value('5.5 % 2')).toBe(1.5);
  });

  it("computes the functions (checked against ECMAScript's constants and values from memory)", () => {
    expect(value('sqrt(2)')).toBe(Math.SQRT2);
    expect(value('exp(1)')).toBeCloseTo(Math.E, 15);
    expect(value('log(10)')).toBe(Math.LN10);
    expect(value('log(exp(2))')).toBeCloseTo(2, 12);
    expect(value('log2(1024)')).toBe(10);
    expect(value('log10(1000)')).toBe(3);
    expect(value('abs(-4.5)')).toBe(4.5);
    expect(value('floor(-2.5)')).toBe(-3);
    expect(value('ceil(-2.5)')).toBe(-2);
    expect(value('round(2.5)')).toBe(3);
    expect(value('round(-2.5)')).toBe(-2); // halves go up, as ECMAScript's Math.round
    expect(value('round(12.4)')).toBe(12);
    expect(value('pow(2, 10)')).toBe(1024);
    expect(value('pow(9, 0.5)')).toBe(3);
    expect(value('min(3, 1, 2)')).toBe(1);
    expect(value('max(3, 1, 2)')).toBe(3);
    expect(value('min(7)')).toBe(7);
  });

  it('reads parameter values from the scope', () => {
    expect(value('2 * minicolumns / hypercolumns')).toBe(8);
    expect(value('round(sqrt(hypercolumns * minicolumns))')).toBe(50);
  });

  it('evaluates every comparison inside a conditional', () => {
    const cases: Array<[string, number]> = [
      ['a < 3 ? 1 : 0', 1],
      ['a < 2 ? 1 : 0', 0],
      ['a <= 2 ? 1 : 0', 1],
      ['a > 2 ? 1 : 0', 0],
      ['a >= 2 ? 1 : 0', 1],
      ['a == 2 ? 1 : 0', 1],
      ['a != 2 ? 1 : 0', 0],
      ['a == 3 ? 1 : 0', 0],
      ['hypercolumns < 10 ? 1 : hypercolumns < 30 ? 2 : 3', 2],
      ['(a > 1 ? 10 : 20) * 3', 30],
    ];
    for (const [text, expected] of cases) expect(value(text), text).toBe(expected);
  });

  it('evaluates only the branch the test picks', () => {
    // The other branch would divide by zero.
    expect(value('a > 1 ? 5 : 1 / 0')).toBe(5);
    expect(value('a < 1 ? log(0) : 6')).toBe(6);
  });

  it('refuses non-finite values where they arise', () => {
    expect(failure('1 / 0')).toBe('1 / 0 gives Infinity; every value in a formula must be a finite number');
    expect(failure('-1 / 0 + 2')).toMatch(/^-1 \/ 0 gives -Infinity/);
    expect(failure('log(0)')).toMatch(/^log\(0\) gives -Infinity/);
    expect(failure('sqrt(a - 3)')).toMatch(/^sqrt\(a - 3\) gives not a number \(NaN\)/);
    expect(failure('0 / 0')).toMatch(/^0 \/ 0 gives not a number/);
    expect(failure('big * big')).toMatch(/^big \* big gives Infinity/);
    expect(failure('10 ^ 400')).toMatch(/^10 \^ 400 gives Infinity/);
    expect(failure('exp(1000)')).toMatch(/^exp\(1000\) gives Infinity/);
    expect(failure('a % 0')).toMatch(/^a % 0 gives not a number/);
  });

  it("reports a name without a value with the scope's reason", () => {
    expect(failure('overlapStart + 1')).toBe('no value for overlapStart');
  });
});
