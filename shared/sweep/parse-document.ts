import { isAlias, isMap, isScalar, isSeq, LineCounter, type Node, parseDocument as parseYamlDocument } from 'yaml';
import { InputError } from '../errors.js';
import { SWEEP_LIMITS } from './limits.js';

/** Aliases resolved while turning YAML into values: enough for reuse, too few for an expansion bomb. */
const MAX_YAML_ALIASES = 100;

function notADocument(source: string, detail: string): InputError {
  return new InputError(`${source}: not a YAML or JSON file (${detail})`, [
    { path: '(file)', message: `${source} is neither YAML nor JSON: ${detail}` },
  ]);
}

/**
 * A YAML map key that repeats an earlier one of the same map, or one that
 * is not a plain name. The YAML library's own duplicate check compares every
 * pair of keys; this one costs one set lookup per key.
 */
function yamlKeyProblem(root: Node | null, lines: LineCounter): string | undefined {
  const stack: Array<Node | null> = [root];
  while (stack.length > 0) {
    const node = stack.pop();
    if (node === null || node === undefined || isAlias(node) || isScalar(node)) continue;
    if (isSeq(node)) {
      for (const item of node.items) stack.push(item as Node | null);
    } else if (isMap(node)) {
      const seen = new Set<string>();
      for (const pair of node.items) {
        const key = pair.key as Node | null;
        const at = (node: Node | null): string => {
          const offset = node?.range?.[0];
          if (offset === undefined) return '';
          const { line, col } = lines.linePos(offset);
          return ` at line ${line}, column ${col}`;
        };
        if (!isScalar(key)) return `map keys must be plain names, not lists or maps${at(key)}`;
        const name = String(key.value);
        if (seen.has(name)) return `the key "${name.slice(0, 60)}" appears twice in one map${at(key)}`;
        seen.add(name);
        stack.push(pair.value as Node | null);
      }
    }
  }
  return undefined;
}

/**
 * Nesting far deeper than any sweep (and than the readers' own limits):
 * found by one pass over the text, before a parser builds it. JSON below
 * this depth is parsed and then refused by the document checks, which name
 * the field; YAML's parser recurses and would fail slowly well before it.
 */
const SCAN_DEPTH = { json: 100_000, yaml: 200 } as const;

function position(text: string, at: number): string {
  let line = 1;
  let start = 0;
  for (let i = text.indexOf('\n'); i >= 0 && i < at; i = text.indexOf('\n', i + 1)) {
    line++;
    start = i + 1;
  }
  return `line ${line}, column ${at - start + 1}`;
}

/** Where JSON text opens its (SCAN_DEPTH.json + 1)-th nested list or map, if it does. */
function deepJson(text: string): number {
  let depth = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c === 34) {
      // A string: skip to its closing quote.
      for (i++; i < text.length; i++) {
        const d = text.charCodeAt(i);
        if (d === 92) i++;
        else if (d === 34) break;
      }
    } else if (c === 91 || c === 123) {
      if (++depth > SCAN_DEPTH.json) return i;
    } else if (c === 93 || c === 125) {
      depth = Math.max(0, depth - 1);
    }
  }
  return -1;
}

/**
 * Where YAML text opens its (SCAN_DEPTH.yaml + 1)-th nested flow list or
 * map, if it does. A bracket counts where a flow collection can begin:
 * first on its line, or after another bracket, a comma, a colon, a dash or
 * a question mark; quoted text and comments are skipped.
 */
function deepYaml(text: string): number {
  let depth = 0;
  let previous = 10;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c === 32 || c === 9 || c === 13) continue;
    const opens =
      previous === 10 ||
      previous === 91 ||
      previous === 123 ||
      previous === 44 ||
      previous === 58 ||
      previous === 45 ||
      previous === 63;
    if (c === 35 && (i === 0 || text.charCodeAt(i - 1) === 32 || text.charCodeAt(i - 1) === 10)) {
      const end = text.indexOf('\n', i);
      i = end < 0 ? text.length : end - 1;
      continue;
    }
    if ((c === 34 || c === 39) && opens) {
      for (i++; i < text.length; i++) {
        const d = text.charCodeAt(i);
        if (c === 34 && d === 92) i++;
        else if (d === c) break;
      }
      previous = c;
      continue;
    }
    if ((c === 91 || c === 123) && opens) {
      if (++depth > SCAN_DEPTH.yaml) return i;
    } else if (c === 93 || c === 125) {
      depth = Math.max(0, depth - 1);
    }
    previous = c;
  }
  return -1;
}

function firstLine(error: unknown): string {
  const text = error instanceof Error ? (error.message.split('\n')[0] ?? '') : String(error);
  const clean = text.replace(/:\s*$/, '');
  return /Maximum call stack size exceeded/.test(clean)
    ? `nested too deeply to read (${clean.replace(/^.*?exceeded\s*/, '').trim() || 'no position'})`
    : clean;
}

/**
 * A sweep file's text as a value: JSON first, then YAML 1.2 (so a JSON file
 * named .yaml and a YAML file named .json both work). Throws InputError
 * naming the file. YAML is read only up to SWEEP_LIMITS.yamlBytes, because
 * reading it costs about a hundred times more than JSON per byte.
 */
export function parseDocument(text: string, source: string): unknown {
  const body = text.startsWith('\uFEFF') ? text.slice(1) : text;
  let value: unknown;
  try {
    const deep = deepJson(body);
    if (deep >= 0) {
      throw new InputError(`${source}: nested more than ${SCAN_DEPTH.json} levels deep at ${position(body, deep)}`, [
        { path: '(file)', message: `lists or maps nested more than ${SCAN_DEPTH.json} levels deep` },
      ]);
    }
    value = JSON.parse(body);
  } catch (jsonError) {
    if (jsonError instanceof InputError) throw jsonError;
    const bytes = Buffer.byteLength(body, 'utf8');
    if (bytes > SWEEP_LIMITS.yamlBytes) {
      throw notADocument(
        source,
        `not valid JSON (${firstLine(jsonError)}), and at ${bytes} bytes more than the ${SWEEP_LIMITS.yamlBytes} a YAML sweep file may have`,
      );
    }
    const deep = deepYaml(body);
    if (deep >= 0) {
      throw new InputError(`${source}: nested more than ${SCAN_DEPTH.yaml} levels deep at ${position(body, deep)}`, [
        { path: '(file)', message: `lists or maps nested more than ${SCAN_DEPTH.yaml} levels deep` },
      ]);
    }
    try {
      const lines = new LineCounter();
      const doc = parseYamlDocument(body, { uniqueKeys: false, prettyErrors: true, lineCounter: lines });
      const error = doc.errors[0];
      if (error !== undefined) throw error;
      const problem = yamlKeyProblem(doc.contents as Node | null, lines);
      if (problem !== undefined) throw new Error(problem);
      value = doc.toJS({ maxAliasCount: MAX_YAML_ALIASES });
    } catch (yamlError) {
      throw notADocument(source, firstLine(yamlError));
    }
  }
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    const got =
      value === null || value === undefined ? 'nothing' : Array.isArray(value) ? 'a list' : `a ${typeof value}`;
    throw new InputError(
      `${source}: not a sweep file: expected a YAML or JSON mapping with name, model, seed, replicates, fixed, vary, sampler, report; got ${got}`,
      [{ path: '(file)', message: `expected a mapping of sweep fields, got ${got}` }],
    );
  }
  return value;
}
