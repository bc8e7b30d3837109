import { readFile } from 'node:fs/promises';
import { parse as parseYaml } from 'yaml';
import { z } from 'zod';
import { type FieldIssue, InputError, invalidInput, issuesFromZod } from '../errors.js';
import { type DerivedSetup, derivedSetup } from '../formula/derive-point.js';
import { compileDerived } from '../formula/derived-params.js';
import type { AnyModel } from '../model.js';
import { findModel, listModels } from '../models/registry.js';
import { paramNames, unknownParamIssue } from '../param-names.js';
import { refineIssues } from '../refine/validate.js';
import { SWEEP_FORMAT, sweepHash } from './hash.js';
import { checkJobLimit } from './job-limit.js';
import { iteratePoints, requestedPointCount, variedNamesOf } from './points.js';
import { RANGE_SCHEMAS, type Range, type RangeKind, rangeKindOf } from './ranges.js';
import { MAX_GRID_POINTS, SPEC_FIELD_ORDER, SweepFileSchema, type SweepSpec } from './schema.js';
import { validatePoints } from './validate-points.js';

export { SWEEP_FORMAT } from './hash.js';

export interface LoadedSweep {
  /** Normalised (defaults applied). */
  readonly spec: SweepSpec;
  /** 64 hex, over the job-defining part only (not `report`). */
  readonly hash: string;
  readonly model: AnyModel;
  /** Model defaults + fixed, validated. */
  readonly baseParams: Readonly<Record<string, unknown>>;
  /** In file order. */
  readonly variedNames: readonly string[];
  readonly source: string | null;
  /** Distinct parameter points (jobs = pointCount x replicates). */
  readonly pointCount: number;
  /** Computed parameters (the `derived` section), compiled; undefined when there are none. */
  readonly derived: DerivedSetup | undefined;
}

export interface ParseOptions {
  /** Refuse (InputError) a sweep with more jobs than this. */
  readonly jobLimit?: number;
  /** The document is a stored sweep.json (normalised), not a person's file. */
  readonly stored?: boolean;
}

/** Contents of `<dir>/sweep.json`. */
export const StoredSweepSchema = z
  .object({
    format: z.literal(SWEEP_FORMAT),
    hash: z.string().regex(/^[0-9a-f]{64}$/),
    codeVersion: z.string(),
    createdAt: z.string(),
    source: z.string().nullable(),
    sweep: z.record(z.string(), z.unknown()),
  })
  .strict();
export type StoredSweep = z.infer<typeof StoredSweepSchema>;

const MAX_FILE_BYTES = 5 * 1024 * 1024;

const ALLOWED_KEYS: Record<string, readonly string[]> = {
  '': SPEC_FIELD_ORDER,
  report: ['x', 'y', 'facet', 'metric', 'bins'],
  refine: ['metric', 'level', 'confidence', 'replicates', 'rounds', 'along'],
  'refine.replicates': ['start', 'max'],
};

/** Stage one: everything except the ranges, which get a per-kind check. */
const TopLevelSchema = SweepFileSchema.extend({
  vary: z.record(z.string(), z.unknown(), { error: 'vary maps parameter names to ranges' }).default({}),
});

function fail(source: string, issues: readonly FieldIssue[]): never {
  throw invalidInput(`${source} is not a valid sweep file`, issues);
}

/** YAML or JSON, decided by trying to parse (JSON first, then YAML 1.2). */
function parseDocument(text: string, source: string): unknown {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch {
    try {
      value = parseYaml(text, { uniqueKeys: true, maxAliasCount: 100, prettyErrors: true });
    } catch (error) {
      const detail = (error instanceof Error ? (error.message.split('\n')[0] ?? '') : String(error)).replace(
        /:\s*$/,
        '',
      );
      throw new InputError(`${source}: not a YAML or JSON file (${detail})`, [
        { path: '(file)', message: `${source} is neither YAML nor JSON: ${detail}` },
      ]);
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

const RANGE_HELP: Record<'grid' | 'sampled', string> = {
  grid: 'with the grid sampler use { list: [...] } or { from, to, steps, scale? }',
  sampled:
    'with the random, lhs and sobol samplers use { between: [low, high], scale?, integer? }, { among: [...] } or { list: [...] }',
};

/** Parse each range by the kind its leading key names, and check it suits the sampler. */
function parseRanges(
  rawVary: Record<string, unknown>,
  samplerKind: string,
  issues: FieldIssue[],
): Record<string, Range> {
  const grid = samplerKind === 'grid';
  const out: Record<string, Range> = {};
  for (const [name, raw] of Object.entries(rawVary)) {
    const path = `vary.${name}`;
    const kind: RangeKind | undefined = rangeKindOf(raw);
    if (kind === undefined) {
      issues.push({
        path,
        message: `a range is an object with one of list, from/to/steps, between or among; ${RANGE_HELP[grid ? 'grid' : 'sampled']}`,
      });
      continue;
    }
    if (grid && (kind === 'between' || kind === 'among')) {
      issues.push({
        path: `${path}.${kind}`,
        message: `\`${kind}\` needs a random, lhs or sobol sampler; ${RANGE_HELP.grid}`,
      });
      continue;
    }
    if (!grid && kind === 'steps') {
      issues.push({
        path: `${path}.from`,
        message: `from/to/steps is a grid range; ${RANGE_HELP.sampled} (or use sampler: { kind: grid })`,
      });
      continue;
    }
    const parsed = RANGE_SCHEMAS[kind].safeParse(raw);
    if (!parsed.success) {
      const allowed = Object.keys(RANGE_SCHEMAS[kind].shape);
      issues.push(...issuesFromZod(parsed.error.issues, { prefix: path, allowedAt: () => allowed }));
      continue;
    }
    out[name] = parsed.data;
  }
  return out;
}

/** Put the spec's fields in canonical order (sweep.json is written like this). */
function orderSpec(spec: SweepSpec): SweepSpec {
  const ordered: Record<string, unknown> = {};
  for (const key of SPEC_FIELD_ORDER) if (spec[key] !== undefined) ordered[key] = spec[key];
  return ordered as SweepSpec;
}

/** Build a loaded sweep from a parsed document (a sweep file or sweep.json's `sweep`). */
export function buildSweep(raw: unknown, source: string, options: ParseOptions = {}): LoadedSweep {
  const issues: FieldIssue[] = [];
  const top = TopLevelSchema.safeParse(raw);
  if (!top.success) issues.push(...issuesFromZod(top.error.issues, { allowedAt: (p) => ALLOWED_KEYS[p] }));
  const rawObject = raw as Record<string, unknown>;
  const samplerKind = top.success
    ? top.data.sampler.kind
    : typeof (rawObject['sampler'] as { kind?: unknown } | undefined)?.kind === 'string'
      ? String((rawObject['sampler'] as { kind: string }).kind)
      : 'grid';
  const rawVary = top.success ? top.data.vary : rawObject['vary'];
  const vary =
    rawVary !== null && typeof rawVary === 'object' && !Array.isArray(rawVary)
      ? parseRanges(rawVary as Record<string, unknown>, samplerKind, issues)
      : {};
  if (issues.length > 0 || !top.success) fail(source, issues);

  const spec = orderSpec({ ...top.data, vary });
  const model = findModel(spec.model);
  if (model === undefined) {
    const known = listModels()
      .map((m) => m.id)
      .join(', ');
    fail(source, [{ path: 'model', message: `unknown model "${spec.model}"; known models: ${known}` }]);
  }

  // Parameter names against the model, before any value is looked at.
  const known = new Set(paramNames(model));
  const variedNames = variedNamesOf(spec);
  for (const name of Object.keys(spec.fixed))
    if (!known.has(name)) issues.push(unknownParamIssue(`fixed.${name}`, name, model));
  for (const name of variedNames) {
    if (!known.has(name)) issues.push(unknownParamIssue(`vary.${name}`, name, model));
    if (Object.hasOwn(spec.fixed, name)) {
      issues.push({
        path: `vary.${name}`,
        message: `"${name}" is both fixed and varied; keep it in one of fixed or vary`,
      });
    }
  }
  const varied = new Set(variedNames);
  const axes: Array<'x' | 'y' | 'facet'> = ['x', 'y', 'facet'];
  const used = new Map<string, string>();
  for (const axis of axes) {
    const name = spec.report[axis];
    if (name === undefined) continue;
    if (!varied.has(name)) {
      issues.push({
        path: `report.${axis}`,
        message: `"${name}" is not a varied parameter; use one of: ${variedNames.join(', ') || '(none: vary has no parameters)'}`,
      });
    } else if (used.has(name)) {
      issues.push({
        path: `report.${axis}`,
        message: `"${name}" is already report.${used.get(name)}; each axis needs its own parameter`,
      });
    } else {
      used.set(name, axis);
    }
  }
  // Computed parameters: names, formulas and their order, before any point.
  let derived: DerivedSetup | undefined;
  const rawDerived = rawObject['derived'];
  let derivedNamesKnown = true;
  if (rawDerived !== null && typeof rawDerived === 'object') {
    // Keys of the raw object: __proto__ does not survive parsing into a record; refuse it rather than drop it.
    for (const key of Object.keys(rawDerived)) {
      if (Object.hasOwn(spec.derived, key) && known.has(key)) continue;
      issues.push(unknownParamIssue(`derived.${key}`, key, model));
      derivedNamesKnown = false;
    }
  }
  if (derivedNamesKnown && Object.keys(spec.derived).length > 0) {
    const compiled = compileDerived(spec.derived, {
      known: [...known],
      fixed: Object.keys(spec.fixed),
      varied: variedNames,
    });
    if (compiled.success) {
      const defaults = model.params.safeParse({});
      derived = derivedSetup(
        compiled.derived,
        defaults.success ? (defaults.data as Record<string, unknown>) : {},
        Object.keys(spec.fixed),
        variedNames,
      );
    } else {
      issues.push(...compiled.issues);
    }
  }
  // A stored sweep (sweep.json) holds the normalised replicates; only a person's file is checked for both.
  issues.push(...refineIssues(spec, options.stored !== true && Object.hasOwn(rawObject, 'replicates')));
  if (spec.sampler.kind === 'sobol' && variedNames.length > 40) {
    issues.push({
      path: 'vary',
      message: `the sobol sampler supports at most 40 varied parameters, got ${variedNames.length}`,
    });
  }
  if (issues.length > 0) fail(source, issues);

  const requested = requestedPointCount(spec);
  // An adaptive sweep is limited by its starting grid at the most replicates a point may get.
  const perPoint = spec.refine?.replicates.max ?? spec.replicates;
  if (spec.sampler.kind === 'grid' && requested > MAX_GRID_POINTS) {
    fail(source, [
      {
        path: 'vary',
        message: `the grid has ${requested} points, more than the most a sweep may have (${MAX_GRID_POINTS}); use fewer values or a sampler with points: N`,
      },
    ]);
  }
  if (options.jobLimit !== undefined && spec.sampler.kind === 'grid') {
    checkJobLimit(requested * perPoint, options.jobLimit);
  }

  // Every point merged with the model defaults and `fixed`, through the model's schema.
  const checked = validatePoints(spec, model, iteratePoints({ spec }), derived);
  if (checked.issues.length > 0) fail(source, checked.issues);
  if (options.jobLimit !== undefined) checkJobLimit(checked.pointCount * perPoint, options.jobLimit);

  const base = model.params.safeParse(spec.fixed);
  const defaults = model.params.safeParse({});
  const baseParams: Record<string, unknown> = base.success
    ? (base.data as Record<string, unknown>)
    : { ...(defaults.success ? (defaults.data as Record<string, unknown>) : {}), ...spec.fixed };

  return {
    spec,
    hash: sweepHash(spec, model, baseParams, derived?.compiled.normalised),
    model,
    baseParams,
    variedNames,
    source,
    pointCount: checked.pointCount,
    derived,
  };
}

/** Parse and validate the text of a sweep file (YAML or JSON). Throws InputError. */
export function parseSweepText(text: string, sourceName: string, options: ParseOptions = {}): LoadedSweep {
  return buildSweep(parseDocument(text, sourceName), sourceName, options);
}

/** Read, parse and validate a sweep file. Throws InputError. */
export async function loadSweepFile(path: string, options: ParseOptions = {}): Promise<LoadedSweep> {
  let text: string;
  try {
    const buffer = await readFile(path);
    if (buffer.length > MAX_FILE_BYTES) {
      throw new InputError(`${path}: the sweep file is ${buffer.length} bytes, more than ${MAX_FILE_BYTES}`, [
        { path: '(file)', message: 'file too large' },
      ]);
    }
    text = buffer.toString('utf8');
  } catch (error) {
    if (error instanceof InputError) throw error;
    const code = (error as NodeJS.ErrnoException).code;
    const why =
      code === 'ENOENT'
        ? 'no such file'
        : code === 'EISDIR'
          ? 'is a folder, not a sweep file'
          : code === 'EACCES'
            ? 'permission denied'
            : String((error as Error).message);
    throw new InputError(`${path}: ${why}`, [{ path: '(file)', message: `${path}: ${why}` }]);
  }
  return parseSweepText(text, path, options);
}

/** A loaded sweep from the contents of sweep.json; its hash must still match this build. */
export function sweepFromStored(json: unknown, where = 'sweep.json'): LoadedSweep {
  const stored = StoredSweepSchema.safeParse(json);
  if (!stored.success) {
    throw invalidInput(
      `${where} is not a recallscape sweep record (format ${SWEEP_FORMAT})`,
      issuesFromZod(stored.error.issues),
    );
  }
  const loaded = buildSweep(stored.data.sweep, where, { stored: true });
  if (loaded.hash !== stored.data.hash) {
    throw new InputError(
      `${where}: the stored hash ${stored.data.hash.slice(0, 16)} does not match the sweep it holds under this build (${loaded.hash.slice(0, 16)}): ` +
        `the file was edited, or model ${loaded.model.id} is now version ${loaded.model.version}. Run the sweep file again into a new folder (another --out or a new name).`,
      [{ path: 'hash', message: 'stored hash does not match the sweep under this build' }],
    );
  }
  return { ...loaded, source: stored.data.source };
}
export { sweepJsonSchema } from './json-schema.js';
