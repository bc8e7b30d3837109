import { describe, expect, it } from 'vitest';
import { FORMULA_LIMITS } from '../../shared/formula/formula-limits.js';
import type { FormulaNode } from '../../shared/formula/formula-tree.js';
import { parseFormula } from '../../shared/formula/parse-formula.js';

function tree(text: string): FormulaNode {
  const result = parseFormula(text);
  if (!result.success) throw new Error(`expected ${JSON.stringify(text)} to parse, got: ${result.message}`);
  return result.tree;
}

function refusal(text: string): string {
  const result = parseFormula(text);
  if (result.success) throw new Error(`expected ${JSON.stringify(text)} to be refused`);
  return result.message;
}

const n = (value: number): FormulaNode => ({ kind: 'number', value });
const v = (name: string): FormulaNode => ({ kind: 'name', name });

describe('the formula language: what it accepts', () => {
  it('reads numbers in decimal and exponent notation', () => {
    expect(tree('12')).toEqual(n(12));
    expect(tree('0.25')).toEqual(n(0.25));
    expect(tree('.5')).toEqual(n(0.5));
    expect(tree('1e3')).toEqual(n(1000));
    expect(tree('2.5E-2')).toEqual(n(0.025));
  });

  it('reads parameter names', () => {
    expect(tree('hypercolumns')).toEqual(v('hypercolumns'));
    expect(tree('  tauZPre ')).toEqual(v('tauZPre'));
  });

  it('reads the five arithmetic operators and ^ as the power', () => {
    for (const op of ['+', '-', '*', '/', '%', '^'] as const) {
      expect(tree(`a ${op} 2`)).toEqual({ kind: 'arithmetic', operator: op, left: v('a'), right: n(2) });
    }
  });

  it('binds * / % tighter than + -, and ^ tighter than * (common practice, no source)', () => {
    expect(tree('1 + 2 * 3')).toEqual({
      kind: 'arithmetic',
      operator: '+',
      left: n(1),
      right: { kind: 'arithmetic', operator: '*', left: n(2), right: n(3) },
    });
    expect(tree('2 * 3 ^ 2')).toEqual({
      kind: 'arithmetic',
      operator: '*',
      left: n(2),
      right: { kind: 'arithmetic', operator: '^', left: n(3), right: n(2) },
    });
  });

  it('groups - and / from the left and ^ from the right (common practice, no source)', () => {
    expect(tree('a - b - c')).toEqual({
      kind: 'arithmetic',
      operator: '-',
      left: { kind: 'arithmetic', operator: '-', left: v('a'), right: v('b') },
      right: v('c'),
    });
    expect(tree('a ^ b ^ c')).toEqual({
      kind: 'arithmetic',
      operator: '^',
      left: v('a'),
      right: { kind: 'arithmetic', operator: '^', left: v('b'), right: v('c') },
    });
  });

  it('reads unary minus and parentheses', () => {
    expect(tree('-a')).toEqual({ kind: 'negate', operand: v('a') });
    expect(tree('-(a + 1)')).toEqual({
      kind: 'negate',
      operand: { kind: 'arithmetic', operator: '+', left: v('a'), right: n(1) },
    });
    expect(tree('(a + 1) * 2')).toEqual({
      kind: 'arithmetic',
      operator: '*',
      left: { kind: 'arithmetic', operator: '+', left: v('a'), right: n(1) },
      right: n(2),
    });
    expect(tree('((a))')).toEqual(v('a'));
  });

  it('reads the six comparisons as the test of a conditional', () => {
    for (const op of ['<', '<=', '>', '>=', '==', '!='] as const) {
      expect(tree(`a ${op} 3 ? 1 : 2`)).toEqual({
        kind: 'conditional',
        test: { kind: 'comparison', operator: op, left: v('a'), right: n(3) },
        whenTrue: n(1),
        whenFalse: n(2),
      });
    }
  });

  it('reads chained conditionals from the right', () => {
    expect(tree('a < 1 ? 10 : a < 2 ? 20 : 30')).toEqual({
      kind: 'conditional',
      test: { kind: 'comparison', operator: '<', left: v('a'), right: n(1) },
      whenTrue: n(10),
      whenFalse: {
        kind: 'conditional',
        test: { kind: 'comparison', operator: '<', left: v('a'), right: n(2) },
        whenTrue: n(20),
        whenFalse: n(30),
      },
    });
  });

  it('reads every function of the list, with its number of arguments', () => {
    for (const fn of ['abs', 'sqrt', 'exp', 'log', 'log2', 'log10', 'floor', 'ceil', 'round']) {
      expect(tree(`${fn}(a)`)).toEqual({ kind: 'call', fn, args: [v('a')] });
    }
    expect(tree('pow(a, 2)')).toEqual({ kind: 'call', fn: 'pow', args: [v('a'), n(2)] });
    expect(tree('min(a)')).toEqual({ kind: 'call', fn: 'min', args: [v('a')] });
    expect(tree('max(a, b, 3)')).toEqual({ kind: 'call', fn: 'max', args: [v('a'), v('b'), n(3)] });
  });

  it('accepts a formula of exactly the maximum length and nesting', () => {
    const long = `a${' + 1'.repeat(10)}`.padEnd(FORMULA_LIMITS.maxLength, ' ');
    expect(long.length).toBe(FORMULA_LIMITS.maxLength);
    expect(parseFormula(long).success).toBe(true);
    const nested = `${'('.repeat(FORMULA_LIMITS.maxParentheses)}a${')'.repeat(FORMULA_LIMITS.maxParentheses)}`;
    expect(tree(nested)).toEqual(v('a'));
  });
});

describe('the formula language: what it refuses', () => {
  it('refuses -a ^ b as ambiguous but accepts both parenthesised readings', () => {
    expect(refusal('-a ^ 2')).toMatch(/ambiguous: write -\(a \^ b\) or \(-a\) \^ b/);
    expect(tree('(-a) ^ 2')).toMatchObject({ kind: 'arithmetic', left: { kind: 'negate' } });
    expect(tree('-(a ^ 2)')).toMatchObject({ kind: 'negate', operand: { kind: 'arithmetic', operator: '^' } });
    expect(tree('2 ^ -1')).toMatchObject({ kind: 'arithmetic', right: { kind: 'negate' } });
  });

  it('refuses other operators, naming what to write instead', () => {
    expect(refusal('a ** 2')).toMatch(/operator \*\* is not allowed: write powers as a \^ b/);
    expect(refusal('a === 1 ? 1 : 2')).toMatch(/operator === is not allowed: compare with ==/);
    expect(refusal('a << 2')).toMatch(/operator << is not allowed/);
    expect(refusal('a && b')).toMatch(/character & at position 3 is not allowed: .*nest a \? b : c/);
    expect(refusal('a || b')).toMatch(/character \| at position 3/);
    expect(refusal('~a')).toMatch(/character ~ at position 1/);
    expect(refusal('!a')).toMatch(/unary ! is not allowed/);
    expect(refusal('+a')).toMatch(/unary \+ is not allowed/);
  });

  it('refuses assignment', () => {
    expect(refusal('a = 1')).toBe('assignment (= at position 3) is not allowed; compare with ==');
    expect(refusal('weightGain=2')).toMatch(/assignment \(= at position 11\)/);
  });

  it('refuses a comparison where a number is needed, and a number as a test', () => {
    expect(refusal('a > 1')).toMatch(/the formula is a comparison \(true or false\)/);
    expect(refusal('a ? 1 : 2')).toMatch(/the test of a \? b : c must be a comparison/);
    expect(refusal('a < b < 3')).toMatch(/the left side of < is a comparison/);
    expect(refusal('(a > 1) * 2')).toMatch(/the left side of \* is a comparison/);
    expect(refusal('min(a > 1)')).toMatch(/argument 1 of min\(\) is a comparison/);
  });

  it('refuses unknown functions, wrong argument counts and a function used as a value', () => {
    expect(refusal('foo(a)')).toMatch(/foo\(\) is not a known function; the functions are min, max, abs/);
    expect(refusal('pow(a)')).toBe('pow() takes 2 arguments, got 1');
    expect(refusal('sqrt(a, b)')).toBe('sqrt() takes 1 argument, got 2');
    expect(refusal('min()')).toBe('min() takes at least 1 argument, got 0');
    expect(refusal('sqrt + 1')).toBe('sqrt is a function: call it as sqrt(...)');
  });

  it('refuses literals that are not numbers, and too large numbers', () => {
    expect(refusal('true')).toMatch(/^true is not allowed/);
    expect(refusal('null')).toMatch(/^null is not allowed/);
    expect(refusal('1e999')).toBe('the number 1e999 is too large');
  });

  it('refuses empty text, several expressions and syntax errors with a position', () => {
    expect(refusal('')).toBe('the formula is empty');
    expect(refusal('   ')).toBe('the formula is empty');
    expect(refusal('a b')).toMatch(/a formula is one expression/);
    expect(refusal('(a, b)')).toMatch(/a formula is one expression/);
    expect(refusal('1 +')).toBe('syntax error at position 4: Expected expression after +');
    expect(refusal('(a + 1')).toMatch(/^syntax error at position \d+: Unclosed \(/);
    expect(refusal('()')).toMatch(/empty parentheses/);
    expect(refusal('a ? 1')).toMatch(/^syntax error at position \d+: Expected :/);
  });

  it('refuses a value that is not a text', () => {
    expect(parseFormula(12 as unknown as string)).toEqual({
      success: false,
      message: 'a formula is a text, e.g. "10 / hypercolumns"',
    });
  });
});

describe('hostile formula texts', () => {
  it('refuses property access, indexing and method calls', () => {
    expect(refusal('a.b')).toBe('a.b is not allowed: formulas have no property access');
    expect(refusal('a?.b')).toMatch(/a\.b is not allowed: formulas have no property access/);
    expect(refusal('a[0]')).toBe('character [ at position 2 is not allowed: formulas have no lists or indexing');
    expect(refusal('process.exit()')).toMatch(/^process\.exit\(\.\.\.\) is not allowed: only the functions min, max/);
    expect(refusal('Math.max(1, 2)')).toMatch(/^Math\.max\(\.\.\.\) is not allowed/);
    expect(refusal('(a)(1)')).toMatch(/is not allowed: only the functions/);
  });

  it('refuses this, strings and template literals', () => {
    expect(refusal('this')).toMatch(/^this is not allowed/);
    expect(refusal('"a"')).toMatch(/character " at position 1 is not allowed: formulas have no strings or templates/);
    expect(refusal("'a'")).toMatch(/character ' at position 1 is not allowed/);
    // biome-ignore lint/suspicious/noTemplateCurlyInString: the text under test is a template literal
    expect(refusal('`${a}`')).toMatch(
      /character ` at position 1 is not allowed: formulas have no strings or templates/,
    );
    expect(refusal('{a: 1}')).toMatch(/character \{ at position 1 is not allowed/);
    expect(refusal('a; b')).toMatch(/character ; at position 2 is not allowed: a formula is one expression/);
  });

  it('parses constructor and __proto__ as plain names, which only a known-name check can accept', () => {
    // They are refused as unknown names by compileDerived (test/formula/derived-params.test.ts).
    expect(tree('constructor')).toEqual(v('constructor'));
    expect(tree('__proto__')).toEqual(v('__proto__'));
    expect(refusal('constructor(1)')).toMatch(/constructor\(\) is not a known function/);
    expect(refusal('__proto__.polluted')).toMatch(/no property access/);
  });

  it('refuses a 100 kB formula by its length, before reading it', () => {
    const huge = `${'a + '.repeat(25_000)}1`;
    expect(huge.length).toBeGreaterThan(100_000);
    expect(refusal(huge)).toBe(`the formula has ${huge.length} characters; at most 1000 are allowed`);
  });

  it('refuses deeply nested parentheses without exhausting the stack', () => {
    const deep = `${'('.repeat(100_000)}a${')'.repeat(100_000)}`;
    expect(refusal(deep)).toMatch(/^the formula has 200001 characters/);
    const justOver = `${'('.repeat(33)}a${')'.repeat(33)}`;
    expect(refusal(justOver)).toBe('parentheses nest more than 32 deep (at position 33)');
  });

  it('refuses long chains of operators that nest the tree too deeply', () => {
    expect(refusal(`${'-'.repeat(999)}a`)).toMatch(/nests more than 64 levels deep/);
    expect(refusal(`${'1 + '.repeat(200)}1`)).toMatch(/nests more than 64 levels deep/);
    expect(refusal(`${'a > 1 ? 1 : '.repeat(80)}1`)).toMatch(/nests more than 64 levels deep/);
    expect(refusal(`${'abs('.repeat(40)}a${')'.repeat(40)}`)).toBe(
      'parentheses nest more than 32 deep (at position 132)',
    );
  });

  it('refuses characters outside ASCII and control characters, by position', () => {
    expect(refusal('aé')).toMatch(/character é at position 2 is not allowed/);
    expect(refusal('a\u0000')).toMatch(/character "\\u0000" at position 2 is not allowed/);
    expect(refusal('$a')).toMatch(/character \$ at position 1 is not allowed/);
  });
});
