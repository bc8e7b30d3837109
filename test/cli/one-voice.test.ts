import { appendFile, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type CliResult, runCli, STACK_LINE } from './cli-helpers.js';

/**
 * Every command speaks one way: an error is one line on stderr starting with
 * "recallscape: ", complete on its own, exit code 2 for bad input, with a
 * suggestion when a known name is close. The expected lines below are the
 * wording this project chose (common practice, no source); the close names
 * are the model's own parameter names and the sweep file's fields.
 */

let dir = '';
/** A small bcpnn sweep that varies tauZPre, run once so `report` has a folder to read. */
let sweepDir = '';

const SMALL = [
  'name: small',
  'seed: 1',
  'replicates: 1',
  'fixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4 }',
  'vary:',
  '  patternOverlap: { list: [0, 1] }',
  '  tauZPre: { list: [50, 100] }',
  '',
].join('\n');

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-one-voice-'));
  await writeFile(join(dir, 'small.yaml'), SMALL);
  const run = await runCli(['run', 'small.yaml', '--out', 'results', '--threads', '1', '--no-report'], dir);
  expect(run.code, run.stderr).toBe(0);
  sweepDir = join(dir, 'results', 'small');
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** The one line of stderr (the test fails when there are more). */
function onlyLine(result: CliResult): string {
  const lines = result.stderr.split('\n').filter((l) => l !== '');
  expect(lines, result.stderr).toHaveLength(1);
  expect(result.stderr).not.toMatch(STACK_LINE);
  return lines[0] ?? '';
}

async function sweepFile(name: string, text: string): Promise<string> {
  await writeFile(join(dir, name), text);
  return name;
}

describe('errors of the argument parser', () => {
  it('reports an unknown option in one line with the prefix and exit 2, pointing to the help', async () => {
    const result = await runCli(['plan', 'small.yaml', '--bogus'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe("recallscape: unknown option '--bogus'; see `recallscape plan --help`");
  });

  it('suggests the close option name on the same line', async () => {
    const result = await runCli(['plan', 'small.yaml', '--outt', 'x'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe("recallscape: unknown option '--outt'; did you mean --out?");
  });

  it('suggests the close command name for a misspelt command', async () => {
    const result = await runCli(['plann', 'small.yaml'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe("recallscape: unknown command 'plann'; did you mean plan?");
  });

  it('reports a missing argument in one line', async () => {
    const result = await runCli(['plan'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe("recallscape: missing required argument 'file'; see `recallscape plan --help`");
  });

  it('reports an unknown top-level option in one line', async () => {
    const result = await runCli(['--frobnicate'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe("recallscape: unknown option '--frobnicate'; see `recallscape --help`");
  });
});

describe('bad option values', () => {
  it('names the option first, as every other message does', async () => {
    const result = await runCli(['run', 'small.yaml', '--threads', 'two'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe('recallscape: --threads: must be a whole number from 1 to 1024, got "two"');
  });
});

describe('errors in sweep files', () => {
  it('reports a missing file once', async () => {
    const result = await runCli(['plan', 'missing.yaml'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe('recallscape: missing.yaml: no such file');
  });

  it('reports a bad fixed value once, not once per point', async () => {
    const file = await sweepFile(
      'bad-fixed.yaml',
      'name: bad\nfixed: { hypercolumns: -3 }\nvary:\n  patternOverlap: { list: [0, 0.25, 0.5, 1] }\n',
    );
    const result = await runCli(['plan', file, '--calibrate', '0'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: bad-fixed.yaml is not a valid sweep file: fixed.hypercolumns: at every point: hypercolumns must be an integer >= 1 and <= 20000',
    );
  });

  it('suggests replicates for replicate', async () => {
    const file = await sweepFile('replicate.yaml', SMALL.replace('replicates: 1', 'replicate: 1'));
    const result = await runCli(['plan', file, '--calibrate', '0'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: replicate.yaml is not a valid sweep file: replicate: unknown field "replicate"; did you mean replicates?',
    );
  });

  it('suggests the parameter that differs only in case, under vary', async () => {
    const file = await sweepFile('case.yaml', SMALL.replace('tauZPre:', 'tauzpre:'));
    const result = await runCli(['plan', file, '--calibrate', '0'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: case.yaml is not a valid sweep file: vary.tauzpre: unknown parameter "tauzpre" of model bcpnn-sequences; did you mean tauZPre?',
    );
  });

  it('prints one line per problem when a file has several, each complete', async () => {
    const file = await sweepFile('two.yaml', 'name: two\nfixed: { hypercolums: 6, minicolums: 10 }\n');
    const result = await runCli(['plan', file, '--calibrate', '0'], dir);
    expect(result.code).toBe(2);
    expect(result.stderr.split('\n').filter((l) => l !== '')).toEqual([
      'recallscape: two.yaml is not a valid sweep file: fixed.hypercolums: unknown parameter "hypercolums" of model bcpnn-sequences; did you mean hypercolumns?',
      'recallscape: two.yaml is not a valid sweep file: fixed.minicolums: unknown parameter "minicolums" of model bcpnn-sequences; did you mean minicolumns?',
    ]);
  });

  it('names only the models a person would choose, not those kept for tests', async () => {
    const file = await sweepFile('model.yaml', 'name: m\nmodel: hopfield\n');
    const result = await runCli(['plan', file, '--calibrate', '0'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: model.yaml is not a valid sweep file: model: unknown model "hopfield"; known models: bcpnn-sequences',
    );
  });
});

describe('names given on the command line', () => {
  it('suggests patternOverlap for --set patternOverlp=0.8', async () => {
    const result = await runCli(['simulate', '--set', 'patternOverlp=0.8'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: invalid parameters for model bcpnn-sequences: --set patternOverlp: unknown parameter "patternOverlp" of model bcpnn-sequences; did you mean patternOverlap?',
    );
  });

  it('suggests tauZPre for --x tauzpre', async () => {
    const result = await runCli(['report', sweepDir, '--x', 'tauzpre'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: --x: "tauzpre" is not a varied parameter of this sweep; did you mean tauZPre?',
    );
  });

  it('suggests the model whose name is close for --model', async () => {
    const result = await runCli(['simulate', '--model', 'bcpnn-sequence'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: --model: unknown model "bcpnn-sequence"; did you mean bcpnn-sequences?',
    );
  });

  it('lists the allowed values when nothing is close', async () => {
    const result = await runCli(['report', sweepDir, '--x', 'weightGain'], dir);
    expect(result.code).toBe(2);
    expect(onlyLine(result)).toBe(
      'recallscape: --x: "weightGain" is not a varied parameter of this sweep; allowed: patternOverlap, tauZPre',
    );
  });
});

describe('the help of every command', () => {
  const helpOf = async (): Promise<Map<string, string>> => {
    const top = await runCli(['--help'], dir);
    const names = [...top.stdout.slice(top.stdout.indexOf('Commands:')).matchAll(/^ {2}([a-z]+)/gm)]
      .map((m) => m[1] ?? '')
      .filter((n) => n !== 'help');
    const helps = await Promise.all(names.map((n) => runCli([n, '--help'], dir)));
    return new Map(names.map((n, i) => [n, helps[i]?.stdout ?? '']));
  };

  it('never shows an empty list as a default, uses --out for a folder only, and offers --json where a script reads the output', async () => {
    const helps = await helpOf();
    expect(helps.size).toBeGreaterThan(10);
    for (const [name, help] of helps) {
      expect(help, name).not.toContain('(default: [])');
      const out = /^\s+--out <(\w+)>/m.exec(help);
      if (out !== null) expect(out[1], `${name} --out`).toBe('dir');
    }
    // Commands whose output a script would read (sweeps lists, the others report figures).
    for (const name of ['plan', 'run', 'sweeps', 'submit', 'progress', 'gather', 'requeue', 'cancel', 'inspect']) {
      expect(helps.get(name), name).toMatch(/^\s+--json\s/m);
    }
    expect(helps.get('schema')).toMatch(/^\s+--file <file>/m);
    expect(helps.get('inspect')).toMatch(/^\s+--file <file\.svg>/m);
  });
});

describe('--json output', () => {
  it('plan --json prints one JSON object with the job count and nothing else', async () => {
    const result = await runCli(['plan', 'small.yaml', '--calibrate', '0', '--json'], dir);
    expect(result.code, result.stderr).toBe(0);
    // 2 x 2 points, 1 replicate: 4 jobs, all with results from the run above.
    expect(JSON.parse(result.stdout)).toMatchObject({ name: 'small', jobs: 4, done: 4, remainingJobs: 0 });
  });

  it('run --json prints the closing summary as the only line of stdout', async () => {
    const result = await runCli(
      ['run', 'small.yaml', '--out', 'results', '--threads', '1', '--json', '--no-report'],
      dir,
    );
    expect(result.code, result.stderr).toBe(0);
    const lines = result.stdout.split('\n').filter((l) => l !== '');
    expect(lines).toHaveLength(1);
    expect(JSON.parse(lines[0] ?? '')).toMatchObject({
      name: 'small',
      planned: 4,
      alreadyDone: 4,
      ran: 0,
      failed: 0,
      missing: 0,
      stopped: null,
      resume: null,
    });
  });

  it('inspect --json prints the re-run job as one JSON object', async () => {
    const results = join(sweepDir, 'results');
    const [shard] = (await readdir(results)).filter((n) => n.endsWith('.ndjson'));
    const first = JSON.parse((await readFile(join(results, shard ?? ''), 'utf8')).split('\n')[0] ?? '') as {
      key: string;
    };
    const svg = join(dir, 'trace.svg');
    const result = await runCli(['inspect', sweepDir, '--job', first.key, '--file', svg, '--json'], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(JSON.parse(result.stdout)).toMatchObject({ key: first.key, stored: 'equal', svgPath: svg });
  });
});

describe('warnings about damaged result files', () => {
  it('names the shard file once per warning, on the command line and on the report page', async () => {
    const results = join(sweepDir, 'results');
    const [shard] = (await readdir(results)).filter((n) => n.endsWith('.ndjson'));
    const path = join(results, shard ?? '');
    await appendFile(path, 'this is not a record\n');
    const result = await runCli(['report', sweepDir, '--format', 'html'], dir);
    expect(result.code, result.stderr).toBe(0);
    const warning = onlyLine(result);
    expect(warning).toMatch(/^recallscape: warning: bad-line: .*: not a valid record; ignored$/);
    expect(warning.split(shard ?? '').length - 1).toBe(1);
    const page = await readFile(join(sweepDir, 'report', 'index.html'), 'utf8');
    const box = page.slice(page.indexOf('id="warnings"'), page.indexOf('</ul>', page.indexOf('id="warnings"')));
    expect(box.split(shard ?? '').length - 1).toBe(1);
  });
});
