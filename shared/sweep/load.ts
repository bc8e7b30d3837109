import { z } from 'zod';
import { unknownNameHint } from '../closest-names.js';
import { type FieldIssue, InputError, invalidInput, issuesFromZod, shorten } from '../errors.js';
import { type DerivedSetup, derivedSetup } from '../formula/derive-point.js';
import { compileDerived } from '../formula/derived-params.js';
import type { AnyModel } from '../model.js';
import { findModel, modelIds } from '../models/registry.js';
import { isParamName, paramNames, unknownParamIssue } from '../param-names.js';
import { refineIssues } from '../refine/validate.js';
import { DEFAULT_SAMPLER, type SamplerDescriptor, samplerFor, samplersAccepting } from '../samplers/index.js';
import { checkBudget, checkPoints } from './check-points.js';
import { documentIssues } from './document-limits.js';
import { SWEEP_FORMAT, sweepHash } from './hash.js';
import { checkJobLimit } from './job-limit.js';
import { SWEEP_LIMITS } from './limits.js';
import { parseDocument } from './parse-document.js';
import { countPoints, requestedPointCount, variedNamesOf } from './points.js';
import {
  RANGE_FORMS,
  RANGE_SCHEMAS,
  type Range,
  type RangeKind,
  rangeKindOf,
  rangeSize,
  repeatedStepValue,
} from './ranges.js';
import { readSweepFile } from './read-sweep-file.js';
import { SamplerSchema, SPEC_FIELD_ORDER, SweepFileSchema, type SweepSpec } from './schema.js';

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
  /** Points run through the model's schema while loading: all of them, or a selection of a large sweep. */
  readonly checkedPoints: number;
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

const ALLOWED_KEYS: Record<string, readonly string[]> = {
  '': SPEC_FIELD_ORDER,
  report: ['x', 'y', 'facet', 'metric', 'bins'],
  refine: ['metric', 'level', 'confidence', 'replicates', 'rounds', 'along'],
  'refine.replicates': ['start', 'max'],
};

/**
 * The fields, except the ranges, which get a check by their kind (so an
 * error names the kind meant). `fixed` is not walked again: the document
 * checks have already held every value in it to plain JSON data.
 */
const TopLevelSchema = SweepFileSchema.extend({
  fixed: z
    .record(z.string(), z.unknown(), { error: 'fixed maps parameter names to values' })
    .default({}) as unknown as (typeof SweepFileSchema.shape)['fixed'],
  vary: z.record(z.string(), z.unknown(), { error: 'vary maps parameter names to ranges' }).default({}),
});

class Refusal {
  constructor(readonly issues: readonly FieldIssue[]) {}
}

/** Stop the pipeline when a stage found problems; `buildSweep` turns them into one InputError. */
function stopIf(issues: readonly FieldIssue[]): void {
  if (issues.length > 0) throw new Refusal(issues);
}

const list = (words: readonly string[], last: string): string =>
  words.length <= 1 ? (words[0] ?? '') : `${words.slice(0, -1).join(', ')} ${last} ${words.at(-1)}`;

/** "with the grid sampler use { list: [...] } or { from, to, steps, scale? }", from the descriptor. */
function rangeHelp(sampler: SamplerDescriptor): string {
  return `with the ${sampler.kind} sampler use ${list(
    sampler.ranges.map((k) => RANGE_FORMS[k].syntax),
    'or',
  )}`;
}

// ---- Stage 1: the document -------------------------------------------------

/** Sizes, nesting and values no sweep needs are refused before any schema looks at the file. */
function checkDocument(raw: unknown): void {
  stopIf(documentIssues(raw));
}

// ---- Stage 2: the fields ---------------------------------------------------

/** Each range by the kind its leading key names, checked against what the sampler takes. */
function parseRanges(rawVary: Record<string, unknown>, sampler: SamplerDescriptor, issues: FieldIssue[]) {
  const out: Record<string, Range> = {};
  for (const [name, raw] of Object.entries(rawVary)) {
    const path = `vary.${name}`;
    const kind: RangeKind | undefined = rangeKindOf(raw);
    if (kind === undefined) {
      issues.push({
        path,
        message: `a range is an object with one of list, from/to/steps, between or among; ${rangeHelp(sampler)}`,
      });
      continue;
    }
    if (!sampler.ranges.includes(kind)) {
      const takers = samplersAccepting(kind).map((s) => s.kind);
      const what = kind === 'steps' ? 'from/to/steps' : `\`${kind}\``;
      issues.push({
        path: `${path}.${RANGE_FORMS[kind].key}`,
        message: `${what} needs the ${list(takers, 'or')} sampler; ${rangeHelp(sampler)}`,
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

/** The sampler named by a file whose other fields may be wrong (its ranges are still worth checking). */
function samplerOf(raw: Record<string, unknown>): SamplerDescriptor {
  const parsed = SamplerSchema.safeParse(raw['sampler']);
  return samplerFor(parsed.success ? parsed.data.kind : DEFAULT_SAMPLER);
}

/** The normalised spec, in canonical field order (sweep.json is written like this). */
function parseFields(raw: unknown): SweepSpec {
  const issues: FieldIssue[] = [];
  const top = TopLevelSchema.safeParse(raw);
  if (!top.success) issues.push(...issuesFromZod(top.error.issues, { allowedAt: (p) => ALLOWED_KEYS[p] }));
  const rawObject = raw as Record<string, unknown>;
  const rawVary = top.success ? top.data.vary : rawObject['vary'];
  const sampler = top.success ? samplerFor(top.data.sampler.kind) : samplerOf(rawObject);
  const vary =
    rawVary !== null && typeof rawVary === 'object' && !Array.isArray(rawVary)
      ? parseRanges(rawVary as Record<string, unknown>, sampler, issues)
      : {};
  stopIf(issues);
  if (!top.success) throw new Refusal(issues);
  const spec: Record<string, unknown> = {};
  for (const key of SPEC_FIELD_ORDER) {
    const value = key === 'vary' ? vary : top.data[key];
    // Optional sections left out stay out (sweep.json and the hash never see them).
    if (value !== undefined) spec[key] = value;
  }
  return spec as SweepSpec;
}

// ---- Stage 3: the model ----------------------------------------------------

function resolveModel(spec: SweepSpec): AnyModel {
  const model = findModel(spec.model);
  if (model !== undefined) return model;
  const hint = unknownNameHint(spec.model, modelIds(), 'known models:');
  throw new Refusal([{ path: 'model', message: `unknown model "${shorten(spec.model)}"; ${hint}` }]);
}

/**
 * Parameter names against the model, report axes against the varied names,
 * and the computed parameters' names and formulas (compiled, in dependency
 * order), before any value is looked at.
 */
function checkNames(
  spec: SweepSpec,
  model: AnyModel,
  raw: Record<string, unknown>,
  options: ParseOptions,
): DerivedSetup | undefined {
  const issues: FieldIssue[] = [];
  const variedNames = variedNamesOf(spec);
  // Names as the file wrote them: a key such as __proto__ does not survive
  // parsing into a record, and is refused here rather than dropped.
  const rawKeys = (section: string): string[] => {
    const value = raw[section];
    return value !== null && typeof value === 'object' ? Object.keys(value) : [];
  };
  for (const name of rawKeys('fixed'))
    if (!isParamName(model, name)) issues.push(unknownParamIssue(`fixed.${name}`, name, model));
  for (const name of rawKeys('vary'))
    if (!isParamName(model, name)) issues.push(unknownParamIssue(`vary.${name}`, name, model));
  for (const name of variedNames) {
    if (Object.hasOwn(spec.fixed, name)) {
      issues.push({
        path: `vary.${name}`,
        message: `"${name}" is both fixed and varied; keep it in one of fixed or vary`,
      });
    }
  }
  const varied = new Set(variedNames);
  const used = new Map<string, string>();
  for (const axis of ['x', 'y', 'facet'] as const) {
    const name = spec.report[axis];
    if (name === undefined) continue;
    if (!varied.has(name)) {
      issues.push({
        path: `report.${axis}`,
        message: `"${shorten(name)}" is not a varied parameter; ${variedNames.length === 0 ? 'vary has no parameters' : unknownNameHint(name, variedNames, 'use one of:', variedNames.length)}`,
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
  let derived: DerivedSetup | undefined;
  let derivedNamesKnown = true;
  for (const key of rawKeys('derived')) {
    if (Object.hasOwn(spec.derived, key) && isParamName(model, key)) continue;
    issues.push(unknownParamIssue(`derived.${key}`, key, model));
    derivedNamesKnown = false;
  }
  if (derivedNamesKnown && Object.keys(spec.derived).length > 0) {
    const compiled = compileDerived(spec.derived, {
      known: paramNames(model),
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
  // An adaptive sweep's refine section against the ranges it refines along. A
  // stored sweep (sweep.json) holds the normalised replicates; only a person's
  // file is checked for both.
  issues.push(...refineIssues(spec, options.stored !== true && Object.hasOwn(raw, 'replicates')));
  stopIf(issues);
  return derived;
}

/** Most replicates one point may get: `replicates`, or refine's maximum for an adaptive sweep. */
function replicatesPerPoint(spec: SweepSpec): number {
  return spec.refine?.replicates.max ?? spec.replicates;
}

// ---- Stage 4: sizes, by arithmetic -----------------------------------------

/**
 * Every size limit, from the numbers in the spec alone: nothing has been
 * expanded yet, so a range of 10^12 steps costs no more than one of 10.
 */
function checkSizes(spec: SweepSpec, options: ParseOptions): void {
  const sampler = samplerFor(spec.sampler.kind);
  const dimensions = variedNamesOf(spec).length;
  if (dimensions > sampler.maxDimensions) {
    throw new Refusal([
      {
        path: 'vary',
        message: `the ${sampler.kind} sampler supports at most ${sampler.maxDimensions} varied parameters, got ${dimensions}`,
      },
    ]);
  }
  const requested = requestedPointCount(spec);
  if (!sampler.needsPoints && requested > SWEEP_LIMITS.gridPoints) {
    const sizes = Object.values(spec.vary).map(rangeSize);
    throw new Refusal([
      {
        path: 'vary',
        message: `the ${sampler.kind} has ${sizes.join(' x ')} = ${requested} points, more than the most a sweep may have (${SWEEP_LIMITS.gridPoints}); use fewer values or a sampler with points: N`,
      },
    ]);
  }
  if (sampler.needsPoints && requested * dimensions > SWEEP_LIMITS.sampledValues) {
    throw new Refusal([
      {
        path: 'sampler.points',
        message: `${requested} points x ${dimensions} varied parameters = ${requested * dimensions} drawn values, more than the ${SWEEP_LIMITS.sampledValues} a sweep may have; use fewer points or fewer varied parameters`,
      },
    ]);
  }
  // Drawn points may still merge (repeats are dropped), so only a product's count is final here.
  if (options.jobLimit !== undefined && !sampler.needsPoints) {
    checkJobLimit(requested * replicatesPerPoint(spec), options.jobLimit);
  }
}

// ---- Stage 5: the values of the ranges -------------------------------------

/** Grid values that would repeat. */
function checkRangeValues(spec: SweepSpec): void {
  const issues: FieldIssue[] = [];
  for (const [name, range] of Object.entries(spec.vary)) {
    if (!('steps' in range)) continue;
    const repeated = repeatedStepValue(range);
    if (repeated !== undefined) {
      issues.push({
        path: `vary.${name}.steps`,
        message: `${range.steps} steps from ${range.from} to ${range.to} are closer than the 12-significant-digit precision of grid values, so the value ${repeated} would repeat; use fewer steps or ends further apart`,
      });
    }
  }
  stopIf(issues);
}

// ---- Stage 6: the points ---------------------------------------------------

/** Counts the distinct points and runs them (or a selection) through the model's schema. */
function checkModelPoints(spec: SweepSpec, model: AnyModel, derived: DerivedSetup | undefined, options: ParseOptions) {
  const { count: pointCount, leading } = countPoints({ spec }, checkBudget({ spec }));
  if (options.jobLimit !== undefined) checkJobLimit(pointCount * replicatesPerPoint(spec), options.jobLimit);
  const check = checkPoints({ spec, derived }, model, pointCount, leading);
  stopIf(check.issues);
  return { pointCount, checkedPoints: check.checked };
}

function baseParamsOf(spec: SweepSpec, model: AnyModel): Record<string, unknown> {
  const base = model.params.safeParse(spec.fixed);
  if (base.success) return base.data as Record<string, unknown>;
  const defaults = model.params.safeParse({});
  return { ...(defaults.success ? (defaults.data as Record<string, unknown>) : {}), ...spec.fixed };
}

/**
 * Build a loaded sweep from a parsed document (a sweep file or sweep.json's
 * `sweep`). The stages run in order and each stops the load when it finds a
 * problem: the document's sizes and nesting, the fields, the model and the
 * names (computed parameters compiled, an adaptive sweep's refine section),
 * every size limit by arithmetic, the range values, then the points.
 * Nothing is expanded before every size is known to be within its limit.
 */
export function buildSweep(raw: unknown, source: string, options: ParseOptions = {}): LoadedSweep {
  try {
    checkDocument(raw);
    const spec = parseFields(raw);
    const model = resolveModel(spec);
    const rawObject = raw as Record<string, unknown>;
    const derived = checkNames(spec, model, rawObject, options);
    checkSizes(spec, options);
    checkRangeValues(spec);
    const { pointCount, checkedPoints } = checkModelPoints(spec, model, derived, options);
    const baseParams = baseParamsOf(spec, model);
    return {
      spec,
      hash: sweepHash(spec, model, baseParams, derived?.compiled.normalised),
      model,
      baseParams,
      variedNames: variedNamesOf(spec),
      source,
      pointCount,
      checkedPoints,
      derived,
    };
  } catch (error) {
    if (error instanceof Refusal) throw invalidInput(`${source} is not a valid sweep file`, error.issues);
    throw error;
  }
}

/** Parse and validate the text of a sweep file (YAML or JSON). Throws InputError. */
export function parseSweepText(text: string, sourceName: string, options: ParseOptions = {}): LoadedSweep {
  return buildSweep(parseDocument(text, sourceName), sourceName, options);
}

/** Read, parse and validate a sweep file. Throws InputError. */
export async function loadSweepFile(path: string, options: ParseOptions = {}): Promise<LoadedSweep> {
  return parseSweepText(await readSweepFile(path), path, options);
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
