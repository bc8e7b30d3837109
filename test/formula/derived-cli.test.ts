import { mkdir, mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, STACK_LINE } from '../cli/cli-helpers.js';

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-derived-cli-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** A sweep file (JSON, so any formula text is written exactly) with one computed parameter. */
function sweepWith(formula: string, name = 'weightGain'): string {
  return JSON.stringify({
    name: 'hostile',
    fixed: { noise: 0.5 },
    vary: { hypercolumns: { list: [10, 25] } },
    derived: { [name]: formula },
  });
}

interface Refused {
  readonly title: string;
  readonly text: string;
  /** Fragments stderr must contain. */
  readonly expected: readonly string[];
}

const REFUSED: readonly Refused[] = [
  { title: 'constructor', text: sweepWith('constructor'), expected: ['unknown name "constructor"'] },
  { title: 'this', text: sweepWith('this'), expected: ['this is not allowed'] },
  { title: 'a.b', text: sweepWith('hypercolumns.length'), expected: ['no property access'] },
  { title: 'a[0]', text: sweepWith('hypercolumns[0]'), expected: ['no lists or indexing'] },
  { title: 'process.exit()', text: sweepWith('process.exit()'), expected: ['process.exit(...) is not allowed'] },
  // biome-ignore lint/suspicious/noTemplateCurlyInString: the formula under test is a template literal
  { title: 'a template string', text: sweepWith('`${hypercolumns}`'), expected: ['no strings or templates'] },
  {
    title: 'a 100 kB formula',
    text: sweepWith(`1${' + 1'.repeat(25_000)}`),
    expected: ['a formula has at most 1000 characters'],
  },
  {
    title: 'deeply nested parentheses',
    text: sweepWith(`${'('.repeat(400)}hypercolumns${')'.repeat(400)}`),
    expected: ['parentheses nest more than 32 deep'],
  },
  { title: '__proto__ as a name', text: sweepWith('__proto__ + 1'), expected: ['unknown name "__proto__"'] },
  {
    title: '__proto__ as a computed parameter',
    text: '{"name": "hostile", "derived": {"__proto__": "1"}}',
    expected: ['derived.__proto__', 'unknown parameter "__proto__"'],
  },
  {
    title: 'a cycle',
    text: JSON.stringify({ name: 'c', derived: { weightGain: 'adaptGain / 2', adaptGain: 'weightGain * 2' } }),
    expected: ['derived.weightGain', 'cycle: weightGain -> adaptGain -> weightGain'],
  },
  {
    title: 'a fractional count',
    text: sweepWith('hypercolumns / 2', 'minicolumns'),
    expected: ['derived.minicolumns', 'at point 2 (hypercolumns=25)', 'the formula must give a whole number'],
  },
  {
    title: 'a non-finite value',
    text: sweepWith('log(hypercolumns - 10)'),
    expected: ['derived.weightGain', 'at point 1 (hypercolumns=10)', 'log(hypercolumns - 10) gives -Infinity'],
  },
];

describe.concurrent('computed parameters on the command line', () => {
  REFUSED.forEach((c, i) => {
    it(`refuses ${c.title} with exit 2, the field, no stack trace and nothing created`, async () => {
      const cwd = join(dir, `refused-${i}`);
      await mkdir(cwd);
      await writeFile(join(cwd, 'sweep.json'), c.text);
      const result = await runCli(['run', 'sweep.json', '--out', 'out', '--threads', '1'], cwd);
      expect(result.code).toBe(2);
      expect(result.stderr).toMatch(/^recallscape: /);
      expect(result.stderr).toContain('derived.');
      for (const fragment of c.expected) expect(result.stderr).toContain(fragment);
      expect(result.stderr).not.toMatch(STACK_LINE);
      expect(result.stdout).toBe('');
      expect(await readdir(cwd)).toEqual(['sweep.json']);
    });
  });

  it('plan shows each formula and the computed values at its sample points', async () => {
    const cwd = join(dir, 'plan');
    await mkdir(cwd);
    await writeFile(
      join(cwd, 'size.yaml'),
      [
        'name: size',
        'vary:',
        '  hypercolumns: { list: [6, 25] }',
        '  minicolumns: { list: [20, 100] }',
        'derived:',
        '  weightGain: "10/hypercolumns"',
        '  recallDuration: "sequenceLength*200"',
      ].join('\n'),
    );
    const result = await runCli(['plan', 'size.yaml', '--calibrate', '0'], cwd);
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/^computed +weightGain = 10 \/ hypercolumns$/m);
    expect(result.stdout).toMatch(/^computed +recallDuration = sequenceLength \* 200$/m);
    // 10/6 = 1.66667 (six digits), 10/25 = 0.4; the default sequenceLength 6 gives 1200 ms.
    expect(result.stdout).toContain('hypercolumns=6  minicolumns=20  ->  weightGain=1.66667  recallDuration=1200');
    expect(result.stdout).toContain('hypercolumns=25  minicolumns=100  ->  weightGain=0.4  recallDuration=1200');
    expect(await readdir(cwd)).toEqual(['size.yaml']);
  });

  it('the schema command describes the derived section', async () => {
    const result = await runCli(['schema'], dir);
    expect(result.code).toBe(0);
    const schema = JSON.parse(result.stdout) as {
      properties: Record<string, { type?: string; additionalProperties?: { type?: string; maxLength?: number } }>;
    };
    const derived = schema.properties['derived'];
    expect(derived?.type).toBe('object');
    expect(derived?.additionalProperties).toMatchObject({ type: 'string', maxLength: 1000 });
  });
});
