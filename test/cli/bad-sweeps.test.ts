import { mkdir, mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';
import { runCli, STACK_LINE } from './cli-helpers.js';

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-cli-bad-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

interface BadCase {
  readonly title: string;
  readonly text: string | Buffer;
  readonly command: 'run' | 'plan';
  readonly extra?: readonly string[];
  /** Fragments stderr must contain: the field, and what is allowed. */
  readonly expected: readonly string[];
}

const CASES: readonly BadCase[] = [
  {
    title: 'rejects an unknown parameter and suggests the close one',
    text: 'name: b\nmodel: cpu-burn\nfixed: { burnMss: 3 }\n',
    command: 'run',
    expected: ['fixed.burnMss', 'unknown parameter', 'did you mean burnMs'],
  },
  {
    title: 'rejects an unknown model and suggests the close one',
    text: 'name: b\nmodel: cpu-burnt\n',
    command: 'run',
    // cpu-burn is loaded with --models here; the list without it is in test-models-hidden.test.ts.
    expected: ['model: unknown model "cpu-burnt"; did you mean cpu-burn?'],
  },
  {
    title: 'rejects a parameter value of the wrong type',
    text: 'name: b\nmodel: cpu-burn\nfixed: { burnMs: fast }\n',
    command: 'run',
    // cpu-burn's parameters are a JSON Schema (a module model), checked by ajv: its wording.
    expected: ['fixed.burnMs', 'must be integer'],
  },
  {
    title: 'rejects a between range with the grid sampler',
    text: 'name: b\nmodel: cpu-burn\nvary: { burnMs: { between: [1, 5] } }\n',
    command: 'run',
    expected: ['vary.burnMs.between', 'random, lhs or sobol', 'list'],
  },
  {
    title: 'rejects a parameter that is both fixed and varied',
    text: 'name: b\nmodel: cpu-burn\nfixed: { burnMs: 3 }\nvary: { burnMs: { list: [1, 5] } }\n',
    command: 'run',
    expected: ['vary.burnMs', 'both fixed and varied'],
  },
  {
    title: 'rejects zero replicates',
    text: 'name: b\nmodel: cpu-burn\nreplicates: 0\n',
    command: 'run',
    expected: ['replicates', 'whole number from 1'],
  },
  {
    title: 'rejects a sweep whose name contains a slash',
    text: 'name: a/b\nmodel: cpu-burn\n',
    command: 'run',
    expected: ['name:', 'a-z, 0-9', 'no "/"'],
  },
  {
    title: 'rejects a sweep whose name contains two dots',
    text: 'name: a..b\nmodel: cpu-burn\n',
    command: 'plan',
    expected: ['name:', 'no ".."'],
  },
  {
    title: 'rejects an empty range',
    text: 'name: b\nmodel: cpu-burn\nvary: { burnMs: { list: [] } }\n',
    command: 'run',
    expected: ['vary.burnMs.list', 'at least one value'],
  },
  {
    title: 'refuses a job count over the limit without --yes',
    text: 'name: b\nmodel: cpu-burn\nreplicates: 200\nvary: { burnMs: { list: [1, 2, 3] } }\n',
    command: 'run',
    extra: ['--max-jobs', '100'],
    expected: ['600 jobs', 'limit 100', '--yes'],
  },
  {
    title: 'refuses a plan over the default job limit without --yes',
    text: 'name: b\nmodel: no-op\nreplicates: 100000\nvary: { value: { from: 0, to: 1, steps: 11 } }\n',
    command: 'plan',
    expected: ['1100000 jobs', 'limit 1000000', '--yes'],
  },
  {
    title: 'rejects a file that is neither YAML nor JSON',
    text: 'name: [b\n  : {x\n',
    command: 'run',
    expected: ['not a YAML or JSON file'],
  },
  {
    title: 'rejects a file that is plain text rather than a mapping of sweep fields',
    text: 'just some words\n',
    command: 'plan',
    expected: ['not a sweep file', 'name, model'],
  },
];

describe.concurrent('bad sweep files on the command line', () => {
  CASES.forEach((c, i) => {
    it(c.title, async () => {
      const cwd = join(dir, `case-${i}`);
      await mkdir(cwd);
      await writeFile(join(cwd, 'sweep.yaml'), c.text);
      // cpu-burn and no-op are test models: --models loads them.
      const args =
        c.command === 'run'
          ? ['run', 'sweep.yaml', '--out', 'out', '--threads', '1', ...TEST_MODEL_FLAGS]
          : ['plan', 'sweep.yaml', '--calibrate', '0', ...TEST_MODEL_FLAGS];
      const result = await runCli([...args, ...(c.extra ?? [])], cwd);
      expect(result.code).toBe(2);
      for (const fragment of c.expected) expect(result.stderr).toContain(fragment);
      expect(result.stderr).toMatch(/^recallscape: /);
      expect(result.stderr).not.toMatch(STACK_LINE);
      expect(result.stdout).toBe('');
      // Nothing was created: only the sweep file is in the folder.
      expect(await readdir(cwd)).toEqual(['sweep.yaml']);
    });
  });

  it('plans a sweep over the job limit when --yes is given', async () => {
    const cwd = join(dir, 'yes');
    await mkdir(cwd);
    await writeFile(
      join(cwd, 'sweep.yaml'),
      'name: b\nmodel: cpu-burn\nreplicates: 200\nvary: { burnMs: { list: [1, 2, 3] } }\n',
    );
    const result = await runCli(
      ['plan', 'sweep.yaml', '--max-jobs', '100', '--yes', '--calibrate', '0', ...TEST_MODEL_FLAGS],
      cwd,
    );
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/^jobs +600$/m);
  });

  it('rejects a thread count that is not a whole number', async () => {
    const cwd = join(dir, 'threads');
    await mkdir(cwd);
    await writeFile(join(cwd, 'sweep.yaml'), 'name: b\nmodel: no-op\n');
    const result = await runCli(['run', 'sweep.yaml', '--out', 'out', '--threads', 'two', ...TEST_MODEL_FLAGS], cwd);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('--threads: must be a whole number from 1');
    expect(await readdir(cwd)).toEqual(['sweep.yaml']);
  });
});
