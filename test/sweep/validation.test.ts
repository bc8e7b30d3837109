import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type FieldIssue, InputError } from '../../shared/errors.js';
import { loadSweepFile, parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

/** The InputError a bad sweep text gives (fails the test if none is thrown). */
function rejection(text: string, options: { jobLimit?: number } = {}): InputError {
  try {
    parseSweepText(text, 'bad.yaml', options);
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return error as InputError;
  }
  throw new Error('expected an InputError, got none');
}

function issueAt(error: InputError, path: string): FieldIssue {
  const issue = error.issues.find((i) => i.path === path);
  if (issue === undefined) throw new Error(`no issue at ${path}; issues: ${JSON.stringify(error.issues)}`);
  return issue;
}

describe('sweep file validation', () => {
  it('rejects a from/to/steps range whose steps are closer than 12 significant digits, naming the field', () => {
    // Inner steps 1.00000000000025, 1.0000000000005 and 1.00000000000075 all round to 1 at 12 significant digits (worked by hand).
    const error = rejection('name: s\nmodel: no-op\nvary:\n  value: { from: 1, to: 1.000000000001, steps: 5 }\n');
    const issue = issueAt(error, 'vary.value.steps');
    expect(issue.message).toContain('12-significant-digit precision');
    expect(error.message).toContain('vary.value');
  });

  it('still accepts steps that are distinct at 12 significant digits', () => {
    const sweep = parseSweepText(
      'name: s\nmodel: no-op\nvary:\n  value: { from: 1, to: 1.00000001, steps: 5 }\n',
      'ok.yaml',
    );
    expect(sweep.pointCount).toBe(5);
  });

  it('rejects a list that repeats a value, naming the field', () => {
    const error = rejection('name: s\nmodel: no-op\nvary:\n  value: { list: [1, 2, 1.0] }\n');
    expect(error.issues.find((i) => i.path.startsWith('vary.value'))?.message).toContain('distinct');
  });

  it('rejects an unknown parameter and suggests the close known name', () => {
    const error = rejection('name: s\nmodel: cpu-burn\nvary:\n  sucessRate: { list: [0.5] }\n');
    const issue = issueAt(error, 'vary.sucessRate');
    expect(issue.message).toContain('unknown parameter "sucessRate"');
    expect(issue.message).toContain('successRate');
    expect(error.message).toContain('bad.yaml');
  });

  it('rejects an unknown fixed parameter of a model', () => {
    const error = rejection('name: s\nmodel: no-op\nfixed: { burnMs: 3 }\n');
    expect(issueAt(error, 'fixed.burnMs').message).toContain('unknown parameter');
  });

  it('rejects an unknown model and lists the known ones: the built-in model, then the test models this file loaded', () => {
    const error = rejection('name: s\nmodel: hopfield-classic\n');
    const issue = issueAt(error, 'model');
    // The folders of test/fixtures/models in name order; without --models only bcpnn-sequences is known
    // (test/cli/test-models-hidden.test.ts).
    expect(issue.message).toBe(
      'unknown model "hopfield-classic"; known models: bcpnn-sequences, cpu-burn, hold, no-op, spin',
    );
  });

  it('suggests the close model name for a misspelt model', () => {
    const error = rejection('name: s\nmodel: bcpnn-sequence\n');
    expect(issueAt(error, 'model').message).toBe('unknown model "bcpnn-sequence"; did you mean bcpnn-sequences?');
  });

  it('rejects a value of the wrong type at the point that carries it', () => {
    const error = rejection('name: s\nmodel: no-op\nvary:\n  value: { list: [1, "two"] }\n');
    const issue = issueAt(error, 'vary.value');
    expect(issue.message).toContain('value="two"');
    // no-op's parameters are a JSON Schema checked by ajv, whose wording this is.
    expect(issue.message).toMatch(/must be number/);
  });

  it('rejects a wrong type in a top-level field', () => {
    const error = rejection('name: s\nmodel: no-op\nseed: "seven"\n');
    expect(issueAt(error, 'seed').message).toContain('whole number');
  });

  it('rejects a between range with the grid sampler and says which ranges are allowed', () => {
    const error = rejection('name: s\nmodel: no-op\nvary:\n  value: { between: [1, 2] }\n');
    const issue = issueAt(error, 'vary.value.between');
    expect(issue.message).toContain('random, lhs or sobol');
    expect(issue.message).toContain('{ from, to, steps, scale? }');
  });

  it('rejects a from/to/steps range with a sampled sweep', () => {
    const error = rejection(
      'name: s\nmodel: no-op\nsampler: { kind: lhs, points: 4 }\nvary:\n  value: { from: 1, to: 2, steps: 3 }\n',
    );
    expect(issueAt(error, 'vary.value.from').message).toContain('between');
  });

  it('rejects a parameter that is both fixed and varied', () => {
    const error = rejection('name: s\nmodel: no-op\nfixed: { value: 1 }\nvary:\n  value: { list: [2, 3] }\n');
    expect(issueAt(error, 'vary.value').message).toContain('both fixed and varied');
  });

  it('rejects replicates: 0', () => {
    const error = rejection('name: s\nmodel: no-op\nreplicates: 0\n');
    expect(issueAt(error, 'replicates').message).toContain('from 1 to');
  });

  it('rejects a sweep whose name contains a slash', () => {
    const error = rejection('name: maps/overlap\nmodel: no-op\n');
    expect(issueAt(error, 'name').message).toContain('no "/"');
  });

  it('rejects a sweep whose name contains ".."', () => {
    const error = rejection('name: a..b\nmodel: no-op\n');
    expect(issueAt(error, 'name').message).toContain('no ".."');
  });

  it('rejects an empty list, an empty among and an empty grid range', () => {
    expect(
      issueAt(rejection('name: s\nmodel: no-op\nvary:\n  value: { list: [] }\n'), 'vary.value.list').message,
    ).toContain('at least one value');
    expect(
      issueAt(
        rejection('name: s\nmodel: no-op\nsampler: { kind: random, points: 3 }\nvary:\n  value: { among: [] }\n'),
        'vary.value.among',
      ).message,
    ).toContain('at least one value');
    expect(
      issueAt(rejection('name: s\nmodel: no-op\nvary:\n  value: { from: 0, to: 1, steps: 0 }\n'), 'vary.value.steps')
        .message,
    ).toBe('steps must be a whole number from 1 to 100000');
    expect(issueAt(rejection('name: s\nmodel: no-op\nvary:\n  value: {}\n'), 'vary.value').message).toContain(
      'list, from/to/steps, between or among',
    );
  });

  it('rejects a file that is neither YAML nor JSON and names the file', () => {
    const error = rejection('name: [unclosed\n  : : {\n');
    expect(error.message).toContain('bad.yaml');
    expect(error.message).toContain('not a YAML or JSON file');
    const plain = rejection('just a sentence, not a sweep\n');
    expect(plain.message).toContain('bad.yaml');
    expect(plain.message).toContain('got a string');
  });

  it('rejects a log scale whose range reaches zero or below', () => {
    const grid = rejection('name: s\nmodel: no-op\nvary:\n  value: { from: 0, to: 10, steps: 3, scale: log }\n');
    expect(issueAt(grid, 'vary.value.from').message).toContain('greater than 0');
    const sampled = rejection(
      'name: s\nmodel: no-op\nsampler: { kind: random, points: 3 }\nvary:\n  value: { between: [-1, 10], scale: log }\n',
    );
    expect(issueAt(sampled, 'vary.value.between').message).toContain('greater than 0');
  });

  it('rejects an unknown key with the allowed keys at that level', () => {
    const error = rejection(
      'name: s\nmodel: no-op\nrepeats: 3\nreport: { colour: red }\nvary:\n  value: { list: [1], step: 2 }\n',
    );
    expect(issueAt(error, 'repeats').message).toContain('replicates');
    expect(issueAt(error, 'report.colour').message).toContain('facet');
    expect(issueAt(error, 'vary.value.step').message).toContain('list');
  });

  it('finds a grid value that breaks an integer parameter at a specific point', () => {
    // burnMs of cpu-burn is an integer: 1, 3.25, 5.5, ... are not.
    const error = rejection('name: s\nmodel: cpu-burn\nvary:\n  burnMs: { from: 1, to: 10, steps: 5 }\n');
    const issue = issueAt(error, 'vary.burnMs');
    expect(issue.message).toContain('burnMs=3.25');
    expect(issue.message).toContain('whole numbers');
  });

  it('finds a sampled value out of the model range and tells it once, with the first failing point and the count', () => {
    // successRate of cpu-burn lies in [0, 1]. The 64 Sobol values of one
    // dimension are k/64 (van der Corput), so 13 of them (k <= 12) map into
    // [0, 1] after scaling to [0, 5] and 51 do not; the second point is
    // 0.5 * 5 = 2.5 (SciPy 1.17 qmc.Sobol: second point 0.5).
    const error = rejection(
      'name: s\nmodel: cpu-burn\nsampler: { kind: sobol, points: 64 }\nvary:\n  successRate: { between: [0, 5] }\n',
    );
    const pointIssues = error.issues.filter((i) => i.path === 'vary.successRate');
    expect(pointIssues).toHaveLength(1);
    // 51 failing points: the first is point 2, then 50 more.
    expect(pointIssues[0]!.message).toMatch(/^at point 2 \(successRate=2\.5\) and 50 more: /);
    expect(error.issues.filter((i) => i.path === 'vary')).toEqual([]);
  });

  it('accepts integer draws for an integer parameter when integer: true is given', () => {
    const sweep = parseSweepText(
      'name: s\nmodel: cpu-burn\nsampler: { kind: random, points: 30 }\nvary:\n  burnMs: { between: [1, 9], integer: true }\n',
      'ok.yaml',
    );
    expect(sweep.pointCount).toBeGreaterThan(0);
    const without = rejection(
      'name: s\nmodel: cpu-burn\nsampler: { kind: random, points: 30 }\nvary:\n  burnMs: { between: [1, 9] }\n',
    );
    expect(issueAt(without, 'vary.burnMs').message).toContain('add integer: true');
  });

  it('rejects report axes that are not varied parameters', () => {
    const error = rejection(
      'name: s\nmodel: cpu-burn\nvary:\n  successRate: { list: [0.5, 1] }\nreport: { x: burnMs, y: successRate, facet: successRate }\n',
    );
    expect(issueAt(error, 'report.x').message).toContain('use one of: successRate');
    expect(issueAt(error, 'report.facet').message).toContain('already report.y');
  });

  it('refuses a sweep over the job limit with both ways out in the message', () => {
    const error = rejection('name: s\nmodel: no-op\nreplicates: 30\nvary:\n  value: { from: 1, to: 40, steps: 40 }\n', {
      jobLimit: 1000,
    });
    expect(error.message).toBe(
      'sweep has 1200 jobs, more than the limit 1000; pass --yes to run it anyway or raise --max-jobs',
    );
  });

  it('reports each problem once, even when several checks of one field fail with the same message', () => {
    const cases: Array<[string, string]> = [
      ['name: s\nmodel: bcpnn-sequences\nseed: 1e300\n', 'seed'],
      ['name: ../evil\nmodel: bcpnn-sequences\n', 'name'],
      ['name: s\nmodel: bcpnn-sequences\nfixed: { hypercolumns: 1e300 }\n', 'fixed.hypercolumns'],
    ];
    for (const [text, path] of cases) {
      const error = rejection(text);
      expect(error.issues.filter((i) => i.path === path)).toHaveLength(1);
      const lines = error.message.split('\n').filter((line) => line.startsWith(`  ${path}:`));
      expect(lines).toHaveLength(1);
    }
  });

  describe('files on disk', () => {
    let dir = '';
    beforeAll(async () => {
      dir = await mkdtemp(join(tmpdir(), 'rs-sweep-'));
    });
    afterAll(async () => {
      await rm(dir, { recursive: true, force: true });
    });

    it('reads a JSON file named .yaml and a YAML file named .json alike', async () => {
      const jsonText = JSON.stringify({ name: 'same', model: 'no-op', vary: { value: { list: [1, 2] } } });
      const yamlText = 'name: same\nmodel: no-op\nvary:\n  value:\n    list: [1, 2]\n';
      await writeFile(join(dir, 'a.yaml'), jsonText);
      await writeFile(join(dir, 'b.json'), yamlText);
      const a = await loadSweepFile(join(dir, 'a.yaml'));
      const b = await loadSweepFile(join(dir, 'b.json'));
      expect(a.hash).toBe(b.hash);
      expect(a.source).toBe(join(dir, 'a.yaml'));
    });

    it('names a missing file', async () => {
      const missing = join(dir, 'nope.yaml');
      await expect(loadSweepFile(missing)).rejects.toThrow(`${missing}: no such file`);
    });
  });
});
