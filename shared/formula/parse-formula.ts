import jsep from 'jsep';
import { FORMULA_FUNCTION_NAMES, FORMULA_FUNCTIONS } from './formula-functions.js';
import { FORMULA_LIMITS } from './formula-limits.js';
import type { ArithmeticOperator, ComparisonOperator, FormulaNode } from './formula-tree.js';

/**
 * Formula text -> checked syntax tree. jsep reads the text; everything it
 * returns is then walked against a whitelist (numbers, parameter names,
 * + - * / % ^, unary minus, comparisons, `a ? b : c`, calls of the fixed
 * functions) and converted into our own tree, so nothing else can reach
 * evaluation. Types are checked here too: a comparison is a test, usable
 * only as the condition of `? :`; everything else is a number.
 */

export type FormulaParse =
  | { readonly success: true; readonly tree: FormulaNode }
  | { readonly success: false; readonly message: string };

const ARITHMETIC: ReadonlySet<string> = new Set<ArithmeticOperator>(['+', '-', '*', '/', '%', '^']);
const COMPARISON: ReadonlySet<string> = new Set<ComparisonOperator>(['<', '<=', '>', '>=', '==', '!=']);

const LANGUAGE = `formulas use numbers, parameter names, + - * / % ^, unary -, parentheses, < <= > >= == !=, a ? b : c and the functions ${FORMULA_FUNCTION_NAMES.join(', ')}`;

/** Operators jsep knows that the language does not, with what to write instead. */
const OPERATOR_HINTS: Readonly<Record<string, string>> = {
  '**': 'write powers as a ^ b',
  '===': 'compare with ==',
  '!==': 'compare with !=',
};

/** Node type jsep gives a parenthesised group, marked by our hook (see configure). */
const GROUP = 'FormulaGroup';
const OPEN_PAREN = 40;

let configured = false;

/**
 * jsep's operator tables are global; this module is their only user. `^`
 * becomes the power (right-associative, binding tighter than * and /), as in
 * spreadsheets and most mathematical writing; in JavaScript it would be XOR.
 * Every other operator jsep knows stays in its table so that the whitelist
 * can name it in its refusal.
 */
function configure(): void {
  if (configured) return;
  configured = true;
  jsep.addBinaryOp('^', 11, true);
  // Parentheses leave no trace in jsep's tree; mark them, because `-a ^ b`
  // must be told apart from `(-a) ^ b`.
  jsep.hooks.add('gobble-token', function markGroup(env) {
    if (this.code !== OPEN_PAREN) return;
    const inner = this.gobbleGroup();
    if (!inner) this.throwError('empty parentheses');
    env.node = this.gobbleTokenProperty({ type: GROUP, expression: inner });
  });
}

class Refusal extends Error {}

function refuse(message: string): never {
  throw new Refusal(message);
}

/** Characters that can appear in a formula at all; everything else is refused by position. */
const ALLOWED_CHARACTER = /[A-Za-z0-9_ \t\r\n.+\-*/%^()<>=!?:,]/;

function characterHint(ch: string): string {
  if (ch === '"' || ch === "'" || ch === '`') return 'formulas have no strings or templates';
  if (ch === '[' || ch === ']') return 'formulas have no lists or indexing';
  if (ch === '{' || ch === '}') return 'formulas have no objects or blocks';
  if (ch === ';') return 'a formula is one expression';
  if (ch === '&' || ch === '|') return 'formulas have no logical or bitwise operators; nest a ? b : c instead';
  return LANGUAGE;
}

/** Checks that need no parsing: length, characters, parenthesis depth, a lone `=`. */
function prescan(text: string): void {
  if (text.length > FORMULA_LIMITS.maxLength) {
    refuse(`the formula has ${text.length} characters; at most ${FORMULA_LIMITS.maxLength} are allowed`);
  }
  if (text.trim() === '') refuse('the formula is empty');
  let depth = 0;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i]!;
    if (!ALLOWED_CHARACTER.test(ch)) {
      // biome-ignore lint/suspicious/noControlCharactersInRegex: control characters are shown escaped
      const shown = /[\u0000-\u0020\u007f-\u00a0]/.test(ch) ? JSON.stringify(ch) : ch;
      refuse(`character ${shown} at position ${i + 1} is not allowed: ${characterHint(ch)}`);
    }
    if (ch === '(') {
      depth++;
      if (depth > FORMULA_LIMITS.maxParentheses) {
        refuse(`parentheses nest more than ${FORMULA_LIMITS.maxParentheses} deep (at position ${i + 1})`);
      }
    } else if (ch === ')') {
      depth = Math.max(0, depth - 1);
    } else if (ch === '=') {
      const before = text[i - 1] ?? '';
      const after = text[i + 1] ?? '';
      if (after !== '=' && !'=!<>'.includes(before === '' ? 'x' : before)) {
        refuse(`assignment (= at position ${i + 1}) is not allowed; compare with ==`);
      }
    }
  }
}

type Jsep = jsep.Expression;
type ValueType = 'number' | 'test';

/** A short rendering of a refused construct for the message (cut at 40 characters). */
function shortText(node: Jsep): string {
  const text = renderRefused(node, 0);
  return text.length > 40 ? `${text.slice(0, 37)}...` : text;
}

function renderRefused(node: Jsep, depth: number): string {
  if (depth > 8) return '...';
  const shortText = (inner: Jsep): string => renderRefused(inner, depth + 1);
  switch (node.type) {
    case 'Identifier':
      return String(node['name']);
    case 'Literal':
      return String(node['raw']);
    case 'ThisExpression':
      return 'this';
    case 'MemberExpression': {
      const object = shortText(node['object'] as Jsep);
      const property = shortText(node['property'] as Jsep);
      return node['computed'] === true ? `${object}[${property}]` : `${object}.${property}`;
    }
    case 'CallExpression':
      return `${shortText(node['callee'] as Jsep)}(...)`;
    case GROUP:
      return `(${shortText(node['expression'] as Jsep)})`;
    default:
      return '...';
  }
}

interface Converted {
  readonly node: FormulaNode;
  readonly type: ValueType;
}

function expectNumber(converted: Converted, where: string): FormulaNode {
  if (converted.type !== 'number') {
    refuse(`${where} is a comparison (true or false), not a number; a comparison can only be the test of a ? b : c`);
  }
  return converted.node;
}

function convert(node: Jsep, depth: number): Converted {
  if (depth > FORMULA_LIMITS.maxDepth) {
    refuse(`the formula nests more than ${FORMULA_LIMITS.maxDepth} levels deep; split it into computed parameters`);
  }
  const next = depth + 1;
  switch (node.type) {
    case GROUP:
      return convert(node['expression'] as Jsep, depth);
    case 'Literal': {
      const value = node['value'];
      if (typeof value !== 'number') refuse(`${String(node['raw'])} is not allowed: ${LANGUAGE}`);
      if (!Number.isFinite(value)) refuse(`the number ${String(node['raw'])} is too large`);
      return { node: { kind: 'number', value }, type: 'number' };
    }
    case 'Identifier': {
      const name = String(node['name']);
      if (FORMULA_FUNCTIONS.has(name)) refuse(`${name} is a function: call it as ${name}(...)`);
      return { node: { kind: 'name', name }, type: 'number' };
    }
    case 'UnaryExpression': {
      const operator = String(node['operator']);
      if (operator !== '-') refuse(`unary ${operator} is not allowed: ${LANGUAGE}`);
      const operand = expectNumber(convert(node['argument'] as Jsep, next), `the operand of unary -`);
      return { node: { kind: 'negate', operand }, type: 'number' };
    }
    case 'BinaryExpression': {
      const operator = String(node['operator']);
      const leftRaw = node['left'] as Jsep;
      const rightRaw = node['right'] as Jsep;
      if (ARITHMETIC.has(operator)) {
        if (operator === '^' && leftRaw.type === 'UnaryExpression') {
          refuse(`-a ^ b is ambiguous: write -(a ^ b) or (-a) ^ b`);
        }
        const left = expectNumber(convert(leftRaw, next), `the left side of ${operator}`);
        const right = expectNumber(convert(rightRaw, next), `the right side of ${operator}`);
        return {
          node: { kind: 'arithmetic', operator: operator as ArithmeticOperator, left, right },
          type: 'number',
        };
      }
      if (COMPARISON.has(operator)) {
        const left = expectNumber(convert(leftRaw, next), `the left side of ${operator}`);
        const right = expectNumber(convert(rightRaw, next), `the right side of ${operator}`);
        return {
          node: { kind: 'comparison', operator: operator as ComparisonOperator, left, right },
          type: 'test',
        };
      }
      refuse(`operator ${operator} is not allowed: ${OPERATOR_HINTS[operator] ?? LANGUAGE}`);
      break;
    }
    case 'ConditionalExpression': {
      const test = convert(node['test'] as Jsep, next);
      if (test.type !== 'test') {
        refuse('the test of a ? b : c must be a comparison (< <= > >= == !=), not a number');
      }
      const whenTrue = expectNumber(convert(node['consequent'] as Jsep, next), 'the value after ?');
      const whenFalse = expectNumber(convert(node['alternate'] as Jsep, next), 'the value after :');
      return { node: { kind: 'conditional', test: test.node, whenTrue, whenFalse }, type: 'number' };
    }
    case 'CallExpression': {
      const callee = node['callee'] as Jsep;
      if (callee.type !== 'Identifier') {
        refuse(
          `${shortText(node)} is not allowed: only the functions ${FORMULA_FUNCTION_NAMES.join(', ')} can be called`,
        );
      }
      const fn = String(callee['name']);
      const spec = FORMULA_FUNCTIONS.get(fn);
      if (spec === undefined) {
        refuse(`${fn}() is not a known function; the functions are ${FORMULA_FUNCTION_NAMES.join(', ')}`);
      }
      const rawArgs = node['arguments'] as Jsep[];
      if (rawArgs.length < spec.minArgs || rawArgs.length > spec.maxArgs) {
        const wanted =
          spec.maxArgs === Number.POSITIVE_INFINITY
            ? `at least ${spec.minArgs} argument${spec.minArgs === 1 ? '' : 's'}`
            : `${spec.minArgs} argument${spec.minArgs === 1 ? '' : 's'}`;
        refuse(`${fn}() takes ${wanted}, got ${rawArgs.length}`);
      }
      const args = rawArgs.map((a, i) => expectNumber(convert(a, next), `argument ${i + 1} of ${fn}()`));
      return { node: { kind: 'call', fn, args }, type: 'number' };
    }
    case 'MemberExpression':
      refuse(`${shortText(node)} is not allowed: formulas have no property access`);
      break;
    case 'ThisExpression':
      refuse(`this is not allowed: ${LANGUAGE}`);
      break;
    case 'Compound':
    case 'SequenceExpression':
      refuse('a formula is one expression: separate function arguments with commas, nothing else');
      break;
    case 'ArrayExpression':
      refuse('formulas have no lists');
      break;
  }
  refuse(`${node.type} is not allowed: ${LANGUAGE}`);
}

/** jsep's message "Unexpected x at character 3" with a 1-based position. */
function syntaxMessage(error: unknown): string {
  if (error instanceof RangeError) {
    return `the formula nests too deeply to read; split it into computed parameters`;
  }
  const e = error as { description?: unknown; index?: unknown; message?: unknown };
  if (typeof e.description === 'string' && typeof e.index === 'number') {
    return `syntax error at position ${e.index + 1}: ${e.description}`;
  }
  return `syntax error: ${String(e.message ?? error)}`;
}

/** Parse and check a formula; never throws. */
export function parseFormula(text: string): FormulaParse {
  if (typeof text !== 'string') return { success: false, message: 'a formula is a text, e.g. "10 / hypercolumns"' };
  try {
    prescan(text);
  } catch (error) {
    if (error instanceof Refusal) return { success: false, message: error.message };
    throw error;
  }
  configure();
  let raw: Jsep;
  try {
    raw = jsep(text);
  } catch (error) {
    return { success: false, message: syntaxMessage(error) };
  }
  try {
    const converted = convert(raw, 1);
    if (converted.type !== 'number') {
      return {
        success: false,
        message:
          'the formula is a comparison (true or false); a parameter needs a number: use it as the test of a ? b : c',
      };
    }
    return { success: true, tree: converted.node };
  } catch (error) {
    if (error instanceof Refusal) return { success: false, message: error.message };
    if (error instanceof RangeError) return { success: false, message: syntaxMessage(error) };
    throw error;
  }
}
