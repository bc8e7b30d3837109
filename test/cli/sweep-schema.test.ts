import { readdir, readFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { Ajv2020, type ValidateFunction } from 'ajv/dist/2020.js';
import { beforeAll, describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { runCli } from './cli-helpers.js';

/**
 * The JSON Schema that `recallscape schema` prints, checked with Ajv (a
 * general JSON Schema validator, draft 2020-12) as an editor would check a
 * sweep file: the parameter names of the chosen model under fixed, vary and
 * derived, and the values under fixed.
 */

const ROOT = resolve(import.meta.dirname, '..', '..');
let validate: ValidateFunction;

beforeAll(async () => {
  const result = await runCli(['schema'], ROOT);
  expect(result.code, result.stderr).toBe(0);
  validate = new Ajv2020({ allErrors: true, strict: false }).compile(JSON.parse(result.stdout) as object);
});

/** The errors Ajv gives for a sweep file written as YAML, as "path keyword value" lines. */
function errorsOf(yaml: string): string[] {
  if (validate(parse(yaml))) return [];
  return (validate.errors ?? [])
    .filter((e) => e.keyword !== 'if' && e.keyword !== 'then')
    .map((e) => {
      const p = e.params as { additionalProperty?: string; propertyName?: string; allowedValues?: unknown };
      return `${e.instancePath} ${e.keyword} ${p.additionalProperty ?? p.propertyName ?? ''}`.trim();
    });
}

const BASE = 'name: s\nfixed: { hypercolumns: 6, minicolumns: 10 }\nvary:\n  patternOverlap: { list: [0, 1] }\n';

describe('the printed JSON Schema', () => {
  it('accepts every example sweep of the repository', async () => {
    const examples = (await readdir(join(ROOT, 'examples'))).filter((n) => n.endsWith('.yaml'));
    expect(examples.length).toBeGreaterThan(3);
    for (const name of examples) {
      expect(errorsOf(await readFile(join(ROOT, 'examples', name), 'utf8')), name).toEqual([]);
    }
  });

  it('accepts a sweep of the default model with no model field', () => {
    expect(errorsOf(BASE)).toEqual([]);
  });

  it('refuses a misspelt parameter name under fixed, naming it', () => {
    expect(errorsOf(BASE.replace('hypercolumns', 'hypercolums'))).toEqual(['/fixed additionalProperties hypercolums']);
  });

  it('refuses a parameter name under vary that differs in case', () => {
    expect(errorsOf(`${BASE}  tauzpre: { list: [50, 100] }\n`)).toEqual(['/vary enum', '/vary propertyNames tauzpre']);
  });

  it('refuses an unknown name under derived', () => {
    expect(errorsOf(`${BASE}derived:\n  weightgain: "10 / hypercolumns"\n`)).toEqual([
      '/derived enum',
      '/derived propertyNames weightgain',
    ]);
  });

  it('accepts a computed parameter of the model under derived', () => {
    expect(errorsOf(`${BASE}derived:\n  weightGain: "10 / hypercolumns"\n`)).toEqual([]);
  });

  it('refuses a fixed value outside the range of its parameter', () => {
    // bcpnn-sequences: hypercolumns is an integer from 1 to 20000 (docs/model.md).
    expect(errorsOf(BASE.replace('hypercolumns: 6', 'hypercolumns: 0'))).toEqual(['/fixed/hypercolumns minimum']);
  });

  it("applies the default model's names only to a file that names it or no model", () => {
    // cpu-burn is a test model (test/fixtures/models), unknown to the printed schema: its names stay open,
    // and bcpnn-sequences' rules do not apply to it.
    const burn = 'name: b\nmodel: cpu-burn\nfixed: { burnMs: 5 }\nvary:\n  successRate: { list: [0.5, 1] }\n';
    expect(errorsOf(burn)).toEqual([]);
    expect(errorsOf('name: b\nfixed: { burnMs: 5 }\n')).toEqual(['/fixed additionalProperties burnMs']);
  });

  it('offers the model names for completion and describes each parameter with its unit', async () => {
    const schema = JSON.parse((await runCli(['schema'], ROOT)).stdout) as {
      properties: { model: { examples: string[] } };
      allOf: Array<{ then: { properties: { fixed: { properties: Record<string, { description?: string }> } } } }>;
    };
    expect(schema.properties.model.examples).toEqual(['bcpnn-sequences']);
    const bcpnn = schema.allOf[0]?.then.properties.fixed.properties ?? {};
    expect(Object.keys(bcpnn)).toContain('tauZPre');
    expect(bcpnn['tauZPre']?.description).toMatch(/\(ms\)$/);
  });
});
