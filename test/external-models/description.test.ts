import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { loadModelFolder } from '../../shared/models/external/load-model-folder.js';
import { modelFolderList, modelFoldersIn, registerModelFolders } from '../../shared/models/external/model-folders.js';
import { findModel } from '../../shared/models/registry.js';
import { EXAMPLES, programDescription, readJson, removeDir, tempDir, writeModelFolder } from './helpers.js';

let base = '';
beforeAll(async () => {
  base = await tempDir('description');
});
afterAll(async () => {
  await removeDir(base);
});

/** The InputError loading this description gives (fails the test when it loads). */
async function problemOf(name: string, description: unknown, files: Record<string, string> = {}): Promise<InputError> {
  const folder = await writeModelFolder(base, name, description, files);
  try {
    await loadModelFolder(folder);
  } catch (error) {
    if (error instanceof InputError) return error;
    throw error;
  }
  throw new Error(`${name}: the description loaded`);
}

describe('a model description file', () => {
  it('gives each example model the defaults written in its description, in order', async () => {
    for (const name of ['hopfield-py', 'forgetting-js']) {
      const folder = join(EXAMPLES, name);
      const model = await loadModelFolder(folder);
      // Expected values read from the JSON file itself, not through the loader.
      const raw = (await readJson(join(folder, 'recallscape-model.json'))) as {
        id: string;
        version: string;
        parameters: { properties: Record<string, { default: unknown; unit?: string }> };
      };
      const expected = Object.fromEntries(Object.entries(raw.parameters.properties).map(([k, v]) => [k, v.default]));
      expect(model.id).toBe(raw.id);
      expect(model.version).toBe(raw.version);
      expect(model.params.parse({})).toEqual(expected);
      expect(Object.keys(model.params.shape)).toEqual(Object.keys(expected));
      for (const [param, spec] of Object.entries(raw.parameters.properties)) {
        expect(model.paramInfo[param]?.unit).toBe(spec.unit ?? '');
      }
    }
  });

  it('validates parameters with the JSON Schema: ranges, whole numbers, enums and unknown names, each at its field', async () => {
    const folder = await writeModelFolder(base, 'ranges', {
      ...programDescription(),
      parameters: {
        type: 'object',
        properties: {
          rate: { type: 'number', minimum: 0, maximum: 10, default: 1, description: 'Firing rate (Hz)' },
          count: { type: 'integer', minimum: 1, default: 3, description: 'Items stored' },
          rule: { enum: ['hebb', 'bcpnn'], default: 'hebb', description: 'Learning rule' },
        },
      },
    });
    const model = await loadModelFolder(folder);
    expect(model.params.parse({ rate: 2.5 })).toEqual({ rate: 2.5, count: 3, rule: 'hebb' });
    const tooHigh = model.params.safeParse({ rate: 11 });
    expect(tooHigh.success).toBe(false);
    expect(tooHigh.error?.issues.map((i) => [i.path.join('.'), i.message])).toEqual([['rate', 'must be <= 10']]);
    const fraction = model.params.safeParse({ count: 2.5 });
    // Flagged like zod's own integer issue, so sweep validation adds its "integer: true" hint.
    expect(fraction.error?.issues[0]).toMatchObject({ code: 'invalid_type', expected: 'int', path: ['count'] });
    const rule = model.params.safeParse({ rule: 'oja' });
    expect(rule.error?.issues[0]?.message).toBe('must be one of "hebb", "bcpnn"');
    const unknown = model.params.safeParse({ rat: 1 });
    expect(unknown.error?.issues[0]).toMatchObject({ code: 'unrecognized_keys', keys: ['rat'] });
  });

  it('checks rules across parameters written in JSON Schema before any job exists', async () => {
    const folder = await writeModelFolder(base, 'cross', {
      ...programDescription(),
      parameters: {
        type: 'object',
        properties: {
          low: { type: 'number', default: 0, description: 'Lower bound' },
          mode: { enum: ['fixed', 'free'], default: 'free', description: 'Mode' },
        },
        if: { properties: { mode: { const: 'fixed' } } },
        // biome-ignore lint/suspicious/noThenProperty: a JSON Schema keyword
        then: { properties: { low: { minimum: 1 } } },
      },
    });
    const model = await loadModelFolder(folder);
    expect(model.params.safeParse({ mode: 'fixed', low: 2 }).success).toBe(true);
    const bad = model.params.safeParse({ mode: 'fixed' });
    expect(bad.error?.issues.map((i) => i.path.join('.'))).toContain('low');
  });

  it('never lets one parse change the defaults of the next', async () => {
    const folder = await writeModelFolder(base, 'list-default', {
      ...programDescription(),
      parameters: {
        type: 'object',
        properties: {
          weights: { type: 'array', items: { type: 'number' }, default: [1, 2], description: 'Weights' },
        },
      },
    });
    const model = await loadModelFolder(folder);
    (model.params.parse({}) as { weights: number[] }).weights.push(99);
    expect(model.params.parse({})).toEqual({ weights: [1, 2] });
  });
});

describe('a bad model description', () => {
  const cases: Array<[string, unknown, RegExp]> = [
    ['not-json', '{ "id": "x", ', /\(file\): not valid JSON/],
    ['no-id', { ...programDescription(), id: undefined }, /\bid: /],
    ['bad-id', programDescription({ id: 'My Model' }), /\bid: lower-case letters/],
    ['bad-kind', programDescription({ kind: 'script' }), /kind: kind must be "program"/],
    [
      'no-default',
      programDescription({
        parameters: { type: 'object', properties: { rate: { type: 'number', description: 'Rate' } } },
      }),
      /parameters\.properties\.rate\.default: every parameter needs a default/,
    ],
    [
      'default-out-of-range',
      programDescription({
        parameters: {
          type: 'object',
          properties: { rate: { type: 'number', maximum: 1, default: 5, description: 'Rate' } },
        },
      }),
      /parameters\.properties\.rate\.default: the default 5 must be <= 1/,
    ],
    [
      'keyword-typo',
      programDescription({
        parameters: {
          type: 'object',
          properties: { rate: { type: 'number', maximun: 1, default: 0, description: 'Rate' } },
        },
      }),
      /parameters\.properties\.rate: not a valid JSON Schema: strict mode: unknown keyword: "maximun"/,
    ],
    [
      'no-description',
      programDescription({ parameters: { type: 'object', properties: { rate: { type: 'number', default: 0 } } } }),
      /parameters\.properties\.rate\.description/,
    ],
    [
      'open-parameters',
      programDescription({
        parameters: { ...(programDescription()['parameters'] as object), additionalProperties: true },
      }),
      /parameters\.additionalProperties: unknown parameters are always refused/,
    ],
    ['unknown-success', programDescription({ successMetric: 'recall' }), /successMetric: "recall" is not one of/],
    [
      'success-not-boolean',
      programDescription({ successMetric: 'error' }),
      /metrics\.error: the success metric must be of type boolean/,
    ],
    [
      'bad-metric-type',
      programDescription({ metrics: { recalled: { type: 'bool', description: 'x' } } }),
      /metrics\.recalled\.type/,
    ],
    ['zero-timeout', programDescription({ timeoutMs: 0 }), /timeoutMs: /],
    ['no-timeout', { ...programDescription(), timeoutMs: undefined }, /timeoutMs: /],
    ['module-on-program', programDescription({ module: 'x.mjs' }), /module/],
    ['empty-command', programDescription({ command: [] }), /command: at least the program to start/],
    ['missing-program-file', programDescription({ command: ['./run.sh'] }), /command\.0: \.\/run\.sh: no such file/],
    [
      'missing-module',
      { ...programDescription({ kind: 'module', module: 'gone.mjs' }), command: undefined },
      /module: gone\.mjs: no such file/,
    ],
  ];
  for (const [name, description, pattern] of cases) {
    it(`is refused with the file and the field named: ${name}`, async () => {
      const error = await problemOf(name, description);
      expect(error.message.startsWith(join(base, name, 'recallscape-model.json'))).toBe(true);
      expect(error.message).toMatch(pattern);
      expect(error.issues.length).toBeGreaterThan(0);
    });
  }

  it('is refused when its module does not export run(), or exports another id', async () => {
    const moduleDescription = { ...programDescription({ kind: 'module', module: 'model.mjs' }), command: undefined };
    const noRun = await problemOf('module-no-run', moduleDescription, { 'model.mjs': 'export const x = 1;\n' });
    expect(noRun.message).toMatch(/module: model\.mjs exports no run\(params, seed\) function/);
    const otherId = await problemOf('module-other-id', moduleDescription, {
      'model.mjs': "export const id = 'other';\nexport function run() { return { metrics: {} }; }\n",
    });
    expect(otherId.message).toMatch(/module: model\.mjs exports id "other", but the description says "tiny"/);
    const broken = await problemOf('module-syntax', moduleDescription, { 'model.mjs': 'export function (\n' });
    expect(broken.message).toMatch(/module: model\.mjs cannot be imported: .*(SyntaxError|syntax)/);
  });
});

describe('a folder of model folders', () => {
  it('loads every sub-folder with a description, or the folder itself when it is one', async () => {
    expect(modelFoldersIn(EXAMPLES)).toEqual([join(EXAMPLES, 'forgetting-js'), join(EXAMPLES, 'hopfield-py')]);
    expect(modelFoldersIn(join(EXAMPLES, 'hopfield-py'))).toEqual([join(EXAMPLES, 'hopfield-py')]);
  });

  it('is refused when it does not exist or holds no model folder', async () => {
    expect(() => modelFoldersIn(join(base, 'nowhere'))).toThrow(/^--models: .*nowhere: no such folder/);
    const empty = join(base, 'empty-parent');
    await writeModelFolder(empty, 'not-a-model', {}, {});
    await removeDir(join(empty, 'not-a-model', 'recallscape-model.json'));
    expect(() => modelFoldersIn(empty)).toThrow(/holds no model folder/);
  });

  it('takes --models over the environment variable, and a list separated by ":"', () => {
    expect(modelFolderList('/a:/b', { RECALLSCAPE_MODELS: '/c' })).toEqual(['/a', '/b']);
    expect(modelFolderList(undefined, { RECALLSCAPE_MODELS: '/c' })).toEqual(['/c']);
    expect(modelFolderList(undefined, {})).toEqual([]);
  });

  it('registers the models once, and refuses a second description with the same id or a built-in id', async () => {
    const first = await registerModelFolders([EXAMPLES]);
    expect(first.map((m) => m.id).sort()).toEqual(['forgetting-js', 'hopfield-py']);
    expect(findModel('hopfield-py')).toBe(first.find((m) => m.id === 'hopfield-py'));
    // Loading the same folders again changes nothing.
    const again = await registerModelFolders([EXAMPLES]);
    expect(again.map((m) => m.id).sort()).toEqual(['forgetting-js', 'hopfield-py']);

    const clash = join(base, 'clash');
    await writeModelFolder(clash, 'copy', programDescription({ id: 'hopfield-py' }), { 'tiny.mjs': '' });
    await expect(registerModelFolders([clash])).rejects.toThrow(
      /copy\/recallscape-model\.json: id: model "hopfield-py" is already defined by .*hopfield-py\/recallscape-model\.json/,
    );
    const builtIn = join(base, 'built-in');
    await writeModelFolder(builtIn, 'bcpnn', programDescription({ id: 'bcpnn-sequences' }));
    await expect(registerModelFolders([builtIn])).rejects.toThrow(/already defined by the built-in models/);
  });
});
