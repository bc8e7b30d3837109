import { Ajv2020, type ErrorObject, type ValidateFunction } from 'ajv/dist/2020.js';
import { z } from 'zod';
import type { FieldIssue } from '../../errors.js';
import type { ParamInfo } from '../../model.js';
import type { ModelDescription } from './description-schema.js';

export interface CompiledParameters {
  /**
   * A zod object with one entry per parameter (so `.shape` lists the names
   * and `.safeParse({})` gives the defaults, like a built-in model's schema);
   * the values themselves are checked by ajv against the description's JSON
   * Schema, compiled once here.
   */
  readonly schema: z.ZodObject;
  readonly defaults: Readonly<Record<string, unknown>>;
  readonly paramInfo: Readonly<Record<string, ParamInfo>>;
}

/** A parameters schema the description got wrong, at `parameters...`. */
export class ParameterSchemaProblem extends Error {
  override readonly name = 'ParameterSchemaProblem';
  constructor(readonly issues: readonly FieldIssue[]) {
    super(issues.map((i) => `${i.path}: ${i.message}`).join('; '));
  }
}

function newAjv(): Ajv2020 {
  // A typo in a keyword ("maximun") is an error, not a silently ignored rule; a
  // `minimum` without a `type` in an if/then branch is normal JSON Schema and stays allowed.
  const ajv = new Ajv2020({
    strict: true,
    strictTypes: false,
    strictTuples: false,
    strictRequired: false,
    allErrors: true,
    useDefaults: false,
  });
  ajv.addKeyword({ keyword: 'unit', schemaType: 'string' });
  return ajv;
}

function compileOrIssue(ajv: Ajv2020, schema: unknown, path: string, issues: FieldIssue[]): ValidateFunction | null {
  try {
    return ajv.compile(schema as object);
  } catch (error) {
    issues.push({
      path,
      message: `not a valid JSON Schema: ${error instanceof Error ? error.message : String(error)}`,
    });
    return null;
  }
}

function pointerPath(pointer: string): string[] {
  if (pointer === '') return [];
  return pointer
    .slice(1)
    .split('/')
    .map((part) => part.replace(/~1/g, '/').replace(/~0/g, '~'));
}

/** ajv's error as a zod-style issue: path as an array, the integer case flagged like zod's own. */
function issueOf(error: ErrorObject, input: Record<string, unknown>) {
  const path: PropertyKey[] = pointerPath(error.instancePath);
  const params = error.params as Record<string, unknown>;
  let message = error.message ?? `fails ${error.keyword}`;
  if (error.keyword === 'required' && typeof params['missingProperty'] === 'string') {
    path.push(params['missingProperty']);
    message = 'is required';
  } else if (error.keyword === 'additionalProperties' && typeof params['additionalProperty'] === 'string') {
    path.push(params['additionalProperty']);
    message = 'is not a known field';
  } else if (error.keyword === 'enum' && Array.isArray(params['allowedValues'])) {
    message = `must be one of ${params['allowedValues'].map((v) => JSON.stringify(v)).join(', ')}`;
  }
  if (error.keyword === 'type' && params['type'] === 'integer') {
    // validatePoints adds "add integer: true" to exactly this issue, as for built-in models.
    return { code: 'invalid_type', expected: 'int', path, message, input } as const;
  }
  return { code: 'custom', path, message, input } as const;
}

/**
 * Compile the description's `parameters` once: check each property's own
 * schema and default, then the whole object with the defaults filled in.
 * Throws ParameterSchemaProblem naming the field.
 */
export function compileParameters(parameters: ModelDescription['parameters']): CompiledParameters {
  const ajv = newAjv();
  const issues: FieldIssue[] = [];
  const defaults: Record<string, unknown> = {};
  const paramInfo: Record<string, ParamInfo> = {};
  for (const [name, property] of Object.entries(parameters.properties)) {
    const path = `parameters.properties.${name}`;
    const validate = compileOrIssue(ajv, property, path, issues);
    if (validate === null) continue;
    if (!validate(property.default)) {
      const why = (validate.errors ?? []).map((e) => `${e.instancePath} ${e.message ?? e.keyword}`.trim()).join('; ');
      issues.push({ path: `${path}.default`, message: `the default ${JSON.stringify(property.default)} ${why}` });
      continue;
    }
    defaults[name] = property.default;
    paramInfo[name] = { unit: property.unit ?? '', description: property.description };
  }
  if (issues.length > 0) throw new ParameterSchemaProblem(issues);
  const whole = { ...parameters, additionalProperties: false };
  const validate = compileOrIssue(ajv, whole, 'parameters', issues);
  if (validate === null) throw new ParameterSchemaProblem(issues);
  if (!validate(defaults)) {
    const why = (validate.errors ?? []).map((e) => `${e.instancePath || '(all)'} ${e.message ?? e.keyword}`).join('; ');
    throw new ParameterSchemaProblem([
      { path: 'parameters', message: `the defaults together do not pass the schema: ${why}` },
    ]);
  }

  const shape: Record<string, z.ZodType> = {};
  for (const [name, value] of Object.entries(defaults)) {
    // A fresh copy per parse, so no caller can change the defaults of later parses.
    shape[name] = z
      .unknown()
      .default(() => structuredClone(value))
      .describe(paramInfo[name]?.description ?? name);
  }
  const schema = z
    .object(shape)
    .strict()
    .superRefine((value, ctx) => {
      if (validate(value)) return;
      for (const error of validate.errors ?? []) ctx.addIssue(issueOf(error, value));
    });
  return { schema, defaults, paramInfo };
}
