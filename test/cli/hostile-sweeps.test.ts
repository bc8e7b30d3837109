import { mkdir, mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, STACK_LINE } from './cli-helpers.js';

// The wide battery of hostile files runs in-process (test/sweep/hostile-files.test.ts),
// through the loader these commands use; these run the real command line on a few.

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-cli-hostile-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function folderWith(name: string, file: string, text: string): Promise<string> {
  const cwd = join(dir, name);
  await mkdir(cwd);
  await writeFile(join(cwd, file), text);
  return cwd;
}

const nest = (depth: number): string => `${'['.repeat(depth)}1${']'.repeat(depth)}`;

describe.concurrent('hostile sweep files on the command line', () => {
  it('plan refuses steps: 1e12 with exit 2 and the cap, and writes nothing', async () => {
    const cwd = await folderWith(
      'steps',
      's.yaml',
      'name: s\nvary: { patternOverlap: { from: 0, to: 1, steps: 1e12 } }\n',
    );
    const result = await runCli(['plan', 's.yaml', '--calibrate', '0'], cwd);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe(
      'recallscape: s.yaml is not a valid sweep file: vary.patternOverlap.steps: steps must be a whole number from 1 to 100000\n',
    );
    expect(result.stdout).toBe('');
    expect(await readdir(cwd)).toEqual(['s.yaml']);
  });

  it('run refuses JSON nested 3,000 deep inside fixed with exit 2, naming the file and the field', async () => {
    const cwd = await folderWith('deep', 'd.json', `{"name": "d", "fixed": {"sequences": ${nest(3000)}}}`);
    const result = await runCli(['run', 'd.json', '--out', 'out', '--threads', '1'], cwd);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('recallscape: d.json is not a valid sweep file: fixed.sequences.0.0.');
    expect(result.stderr).toContain('nested more than 32 levels deep');
    expect(result.stderr).not.toMatch(STACK_LINE);
    expect(await readdir(cwd)).toEqual(['d.json']);
  });

  it('submit refuses NaN and Infinity in fixed before it reaches Redis, naming each field', async () => {
    const cwd = await folderWith('nan', 'n.yaml', 'name: n\nfixed: { noise: .nan, gain: .inf }\n');
    // Nothing listens on port 1: reaching Redis would fail with exit 1, not 2.
    const result = await runCli(['submit', 'n.yaml', '--redis', 'redis://127.0.0.1:1', '--out', 'out'], cwd);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain(
      'recallscape: n.yaml is not a valid sweep file: fixed.noise: must be a finite number, got NaN\n',
    );
    expect(result.stderr).toContain(
      'recallscape: n.yaml is not a valid sweep file: fixed.gain: must be a finite number, got Infinity\n',
    );
    expect(await readdir(cwd)).toEqual(['n.yaml']);
  });

  it('prints a problem that several checks find only once', async () => {
    const cwd = await folderWith('once', 'o.yaml', 'name: ../evil\nseed: 1e300\nfixed: { hypercolumns: 1e300 }\n');
    const result = await runCli(['plan', 'o.yaml', '--calibrate', '0'], cwd);
    expect(result.code).toBe(2);
    const lines = result.stderr.split('\n').filter((l) => l !== '');
    expect(lines).toEqual([
      'recallscape: o.yaml is not a valid sweep file: name: use 1 to 100 of a-z, 0-9, ".", "_", "-", starting with a letter or digit, with no "/" and no ".."',
      'recallscape: o.yaml is not a valid sweep file: seed: seed must be a whole number from 0 to 2^53 - 1',
    ]);
  });

  it('plans a sweep of 100,000 points, saying how many points were checked and costed', async () => {
    const cwd = await folderWith(
      'big',
      'b.yaml',
      'name: b\nvary: { patternOverlap: { from: 0, to: 1, steps: 100000 } }\n',
    );
    const result = await runCli(['plan', 'b.yaml', '--calibrate', '0'], cwd);
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/^points {6}100,000$/m);
    expect(result.stdout).toMatch(
      /^checked {5}[\d,]+ of 100,000 points against the model \(the others when they run\)$/m,
    );
    expect(result.stdout).toMatch(/^work {8}\S+ operations \(the model's own estimate, from 256 of the points\)$/m);
    expect(await readdir(cwd)).toEqual(['b.yaml']);
  });
});
