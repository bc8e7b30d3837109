import { mkdir, mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { SWEEP_LIMITS } from '../../shared/sweep/limits.js';
import { loadSweepFile } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

/**
 * Hostile and extreme sweep files, each refused through loadSweepFile: the
 * function `plan`, `run` and `submit` load a sweep file with (a few go
 * through the real command line in test/cli/hostile-sweeps.test.ts). Each
 * case names the field the message must name and a fragment saying why.
 */
interface Hostile {
  readonly title: string;
  readonly file: string;
  readonly text: () => string | Buffer;
  /** Field path the InputError must carry, and fragments of that issue's message. */
  readonly path: string;
  readonly says: readonly string[];
  readonly jobLimit?: number;
}

const values = (n: number, f: (i: number) => string): string => Array.from({ length: n }, (_, i) => f(i)).join(', ');
const nest = (depth: number): string => `${'['.repeat(depth)}1${']'.repeat(depth)}`;
const deepPath = (prefix: string, levels: number): string => [prefix, ...Array(levels).fill('0')].join('.');
const STEPS_RULE = 'steps must be a whole number from 1 to 100000';

const CASES: readonly Hostile[] = [
  {
    title: 'steps: 1e6',
    file: 'a.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e6 } }\n',
    path: 'vary.patternOverlap.steps',
    says: [STEPS_RULE],
  },
  {
    title: 'steps: 1e12',
    file: 'a.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e12 } }\n',
    path: 'vary.patternOverlap.steps',
    says: [STEPS_RULE],
  },
  {
    title: 'steps: 2e5',
    file: 'a.yaml',
    text: () => 'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 2e5 } }\n',
    path: 'vary.patternOverlap.steps',
    says: [STEPS_RULE],
  },
  {
    title: 'steps: 1e300 and a fractional step count',
    file: 'a.yaml',
    text: () =>
      'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e300 }, tauZPre: { from: 1, to: 9, steps: 2.5 } }\n',
    path: 'vary.tauZPre.steps',
    says: [STEPS_RULE],
  },
  {
    title: '100,000 steps closer together than 12 significant digits',
    file: 'a.yaml',
    text: () => 'name: s\nmodel: no-op\nvary: { value: { from: 1, to: 1.0000001, steps: 100000 } }\n',
    path: 'vary.value.steps',
    says: ['closer than the 12-significant-digit precision', 'would repeat'],
  },
  {
    title: 'a grid of 100^10 points',
    file: 'a.yaml',
    text: () =>
      `name: s\nvary:\n${[
        'tauZPre',
        'tauZPost',
        'tauP',
        'tauSupport',
        'tauAdapt',
        'adaptGain',
        'gain',
        'weightGain',
        'biasGain',
        'cueStrength',
      ]
        .map((p) => `  ${p}: { from: 10, to: 200, steps: 100 }`)
        .join('\n')}\n`,
    path: 'vary',
    says: ['= 100000000000000000000 points', 'more than the most a sweep may have (5000000)'],
  },
  {
    title: 'a grid of 5,000,000 points over the job limit',
    file: 'a.yaml',
    text: () =>
      'name: s\nvary:\n  patternOverlap: { from: 0, to: 1, steps: 100000 }\n  tauZPre: { from: 10, to: 200, steps: 50 }\n',
    jobLimit: 1_000_000,
    path: 'replicates',
    says: ['5000000 jobs', 'exceed the limit 1000000'],
  },
  {
    title: 'replicates: 1e300',
    file: 'a.yaml',
    text: () => 'name: s\nreplicates: 1e300\n',
    path: 'replicates',
    says: ['replicates must be a whole number from 1 to 100000'],
  },
  {
    title: 'replicates times points over the job limit',
    file: 'a.yaml',
    text: () => 'name: s\nreplicates: 100000\nvary: { patternOverlap: { from: 0, to: 1, steps: 100000 } }\n',
    jobLimit: 1_000_000,
    path: 'replicates',
    says: ['10000000000 jobs'],
  },
  {
    title: 'points: 1e9',
    file: 'a.yaml',
    text: () => 'name: s\nsampler: { kind: random, points: 1e9 }\nvary: { patternOverlap: { between: [0, 1] } }\n',
    path: 'sampler.points',
    says: ['points must be a whole number from 1 to 1000000'],
  },
  {
    title: 'points x varied parameters over the drawing limit',
    file: 'a.yaml',
    text: () =>
      'name: s\nsampler: { kind: lhs, points: 1000000 }\nvary: { patternOverlap: { between: [0, 1] }, tauZPre: { between: [10, 90] }, gain: { between: [1, 2] } }\n',
    path: 'sampler.points',
    says: ['1000000 points x 3 varied parameters = 3000000 drawn values', 'more than the 1000000'],
  },
  {
    title: 'an unknown sampler kind',
    file: 'a.yaml',
    text: () => 'name: s\nsampler: { kind: halton, points: 8 }\n',
    path: 'sampler.kind',
    says: ['sampler.kind must be one of grid, random, lhs, sobol'],
  },
  {
    title: 'ends of a grid range too far apart for a double',
    file: 'a.yaml',
    text: () => 'name: s\nmodel: no-op\nvary: { value: { from: -1e308, to: 1e308, steps: 3 } }\n',
    path: 'vary.value.to',
    says: ['too far apart'],
  },
  {
    title: 'ends of an interval too far apart for a double',
    file: 'a.yaml',
    text: () =>
      'name: s\nmodel: no-op\nsampler: { kind: random, points: 3 }\nvary: { value: { between: [-1e308, 1e308] } }\n',
    path: 'vary.value.between',
    says: ['too far apart'],
  },
  {
    title: 'whole-number draws between ends beyond 2^53',
    file: 'a.yaml',
    text: () =>
      'name: s\nmodel: no-op\nsampler: { kind: random, points: 3 }\nvary: { value: { between: [0, 1e300], integer: true } }\n',
    path: 'vary.value.between',
    says: ['whole-number ends between -(2^53 - 1) and 2^53 - 1'],
  },
  {
    title: 'JSON nested 3,000 deep inside fixed',
    file: 'a.json',
    text: () => `{"name": "s", "fixed": {"sequences": ${nest(3000)}}}`,
    path: deepPath('fixed.sequences', SWEEP_LIMITS.depth - 2),
    says: ['nested more than 32 levels deep'],
  },
  {
    title: 'JSON nested 40 deep in a range list',
    file: 'a.json',
    text: () => `{"name": "s", "vary": {"tauZPre": {"list": ${nest(40)}}}}`,
    path: deepPath('vary.tauZPre.list', SWEEP_LIMITS.depth - 3),
    says: ['nested more than 32 levels deep'],
  },
  {
    title: 'JSON nested 300,000 deep',
    file: 'a.json',
    text: () => `{"name": "s", "fixed": {"sequences": ${nest(300_000)}}}`,
    path: '(file)',
    says: ['nested more than 100000 levels deep'],
  },
  {
    title: 'YAML nested 3,000 deep',
    file: 'a.yaml',
    text: () => `name: s\nfixed: { sequences: ${nest(3000)} }\n`,
    path: '(file)',
    says: ['nested more than 200 levels deep'],
  },
  {
    title: 'YAML nested 50 deep (below the text scan, above the document limit)',
    file: 'a.yaml',
    text: () => `name: s\nfixed:\n  sequences: ${nest(50)}\n`,
    path: deepPath('fixed.sequences', SWEEP_LIMITS.depth - 2),
    says: ['nested more than 32 levels deep'],
  },
  {
    title: 'NaN in fixed',
    file: 'a.yaml',
    text: () => 'name: s\nfixed: { noise: .nan }\n',
    path: 'fixed.noise',
    says: ['must be a finite number, got NaN'],
  },
  {
    title: 'Infinity in fixed',
    file: 'a.yaml',
    text: () => 'name: s\nfixed: { gain: -.inf }\n',
    path: 'fixed.gain',
    says: ['must be a finite number, got -Infinity'],
  },
  {
    title: 'a JSON number too large for a double in fixed',
    file: 'a.json',
    text: () => '{"name": "s", "fixed": {"gain": 1e400}}',
    path: 'fixed.gain',
    says: ['must be a finite number, got Infinity'],
  },
  {
    title: 'NaN inside a range list',
    file: 'a.yaml',
    text: () => 'name: s\nvary: { gain: { list: [1, .nan] } }\n',
    path: 'vary.gain.list.1',
    says: ['must be a finite number'],
  },
  {
    title: 'NaN as a seed',
    file: 'a.yaml',
    text: () => 'name: s\nseed: .nan\n',
    path: 'seed',
    says: ['must be a finite number'],
  },
  {
    title: 'a list of 200,000 values',
    file: 'a.json',
    text: () => `{"name": "s", "vary": {"tauZPre": {"list": [${values(200_000, (i) => String(i))}]}}}`,
    path: 'vary.tauZPre.list',
    says: ['a list of 200000 values; at most 100000'],
  },
  {
    title: 'fixed with 2,000 keys',
    file: 'a.json',
    text: () => `{"name": "s", "fixed": {${values(2000, (i) => `"k${i}": 1`)}}}`,
    path: 'fixed',
    says: ['a map of 2000 keys; at most 1000'],
  },
  {
    title: 'more than 200,000 values in all',
    file: 'a.json',
    text: () => `{"name": "s", "fixed": {"sequences": [${values(1000, () => `[${values(450, () => '1')}]`)}]}}`,
    path: '(file)',
    says: ['more than 200000 values'],
  },
  {
    title: 'a name of 20,000 characters',
    file: 'a.json',
    text: () => `{"name": "${'a'.repeat(20_000)}"}`,
    path: 'name',
    says: ['use 1 to 100 of a-z'],
  },
  {
    title: 'a list text of 5,000 characters',
    file: 'a.json',
    text: () => `{"name": "s", "model": "no-op", "vary": {"value": {"list": [1, "${'t'.repeat(5000)}"]}}}`,
    path: 'vary.value.list.1',
    says: ['a text value of a range has at most 1000 characters'],
  },
  {
    title: 'a key of 5,000 characters',
    file: 'a.json',
    text: () => `{"name": "s", "fixed": {"${'k'.repeat(5000)}": 1}}`,
    path: `fixed.${'k'.repeat(40)}...`,
    says: ['a key of 5000 characters; at most 200'],
  },
  {
    title: '__proto__ in fixed (JSON)',
    file: 'a.json',
    text: () => '{"name": "s", "fixed": {"__proto__": {"noise": 3}}}',
    path: 'fixed.__proto__',
    says: ['unknown parameter "__proto__" of model bcpnn-sequences'],
  },
  {
    title: '__proto__ in vary (JSON)',
    file: 'a.json',
    text: () => '{"name": "s", "vary": {"__proto__": {"list": [1, 2]}}}',
    path: 'vary.__proto__',
    says: ['unknown parameter "__proto__" of model bcpnn-sequences'],
  },
  {
    title: '__proto__ as a top-level key',
    file: 'a.json',
    text: () => '{"name": "s", "__proto__": {"replicates": 3}}',
    path: '__proto__',
    says: ['unknown field "__proto__"'],
  },
  {
    title: '__proto__ in fixed (YAML)',
    file: 'a.yaml',
    text: () => 'name: s\nfixed:\n  __proto__: { noise: 3 }\n',
    path: 'fixed.__proto__',
    says: ['unknown parameter "__proto__" of model bcpnn-sequences'],
  },
  {
    title: 'constructor as a parameter name',
    file: 'a.yaml',
    text: () => 'name: s\nfixed: { constructor: 1 }\nvary: { prototype: { list: [1] } }\n',
    path: 'vary.prototype',
    says: ['unknown parameter "prototype"'],
  },
  {
    title: 'a file over the size limit',
    file: 'a.json',
    text: () => `{"name": "s", "fixed": {"x": "${'y'.repeat(3 * 1024 * 1024)}"}}`,
    path: '(file)',
    says: ['more than the 2097152 a sweep file may have'],
  },
  {
    title: 'a YAML file over the YAML size limit',
    file: 'a.yaml',
    text: () =>
      `name: s\nvary:\n  tauZPre:\n    list:\n${values(30_000, (i) => `      - ${i}`).replaceAll(', ', '\n')}\n`,
    path: '(file)',
    says: ['more than the 32768 a YAML sweep file may have'],
  },
  {
    title: 'a YAML key given twice',
    file: 'a.yaml',
    text: () => 'name: s\nfixed: { gain: 1, gain: 2 }\n',
    path: '(file)',
    says: ['the key "gain" appears twice in one map at line 2'],
  },
  {
    title: 'a YAML map key that is a list',
    file: 'a.yaml',
    text: () => 'name: s\nfixed:\n  ? [a, b]\n  : 1\n',
    path: '(file)',
    says: ['map keys must be plain names'],
  },
  {
    title: 'YAML aliases expanding exponentially',
    file: 'a.yaml',
    text: () => {
      let text = 'name: s\na0: &a0 [x, x, x, x, x, x, x, x, x, x]\n';
      for (let i = 1; i < 10; i++) text += `a${i}: &a${i} [${values(10, () => `*a${i - 1}`)}]\n`;
      return text;
    },
    path: '(file)',
    says: ['Excessive alias count'],
  },
  {
    title: 'binary garbage',
    file: 'a.yaml',
    text: () => Buffer.from(Array.from({ length: 4096 }, (_, i) => (i * 151 + 7) % 256)),
    path: '(file)',
    says: ['expected a mapping of sweep fields, got a string'],
  },
  {
    title: 'an empty file',
    file: 'a.yaml',
    text: () => '',
    path: '(file)',
    says: ['expected a mapping of sweep fields, got nothing'],
  },
];

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-hostile-files-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function refusal(file: string, jobLimit?: number): Promise<InputError> {
  try {
    await loadSweepFile(file, jobLimit === undefined ? {} : { jobLimit });
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return error as InputError;
  }
  throw new Error(`${file} was accepted`);
}

describe('hostile sweep files', () => {
  CASES.forEach((c, i) => {
    it(`refuses ${c.title}, naming the field`, async () => {
      const folder = join(dir, `case-${i}`);
      await rm(folder, { recursive: true, force: true });
      await mkdir(folder);
      const file = join(folder, c.file);
      await writeFile(file, c.text());
      const error = await refusal(file, c.jobLimit);
      const issue = error.issues.find((x) => x.path === c.path);
      if (issue === undefined) throw new Error(`no issue at ${c.path}: ${JSON.stringify(error.issues).slice(0, 400)}`);
      for (const fragment of c.says) expect(`${issue.path}: ${issue.message}`).toContain(fragment);
      // The message names the file (or the job count), is short, and says each thing once.
      if (c.jobLimit === undefined) expect(error.message).toContain(file);
      expect(error.message.length).toBeLessThan(3000);
      const lines = error.message.split('\n');
      expect(new Set(lines).size).toBe(lines.length);
      // Loading writes nothing.
      expect(await readdir(folder)).toEqual([c.file]);
    });
  });

  it('refuses a device that never ends after reading at most the size limit', async () => {
    const error = await refusal('/dev/zero');
    expect(error.message).toBe('/dev/zero: the sweep file is more than the 2097152 bytes a sweep file may have');
  });

  it('refuses a folder', async () => {
    const error = await refusal(dir);
    expect(error.message).toBe(`${dir}: is a folder, not a sweep file`);
  });
});
