import { mkdir, mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, STACK_LINE } from './cli-helpers.js';

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-simulate-names-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('parameter names given to simulate', () => {
  it('refuses --set __proto__, constructor and prototype as unknown parameters, naming each', async () => {
    const result = await runCli(
      ['simulate', '--set', '__proto__={"noise":5}', '--set', 'constructor=1', '--set', 'prototype=2'],
      dir,
    );
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toContain('--set __proto__: unknown parameter "__proto__" of model bcpnn-sequences');
    expect(result.stderr).toContain('--set constructor: unknown parameter "constructor"');
    expect(result.stderr).toContain('--set prototype: unknown parameter "prototype"');
    expect(result.stderr).not.toMatch(STACK_LINE);
  });

  it('suggests the close name for a misspelt --set parameter', async () => {
    const result = await runCli(['simulate', '--set', 'tauZpre=40'], dir);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('--set tauZpre: unknown parameter "tauZpre"');
    expect(result.stderr).toContain('did you mean tauZPre');
  });

  it('refuses a __proto__ key in a --params file and writes nothing', async () => {
    const cwd = join(dir, 'params');
    await rm(cwd, { recursive: true, force: true });
    await mkdir(cwd);
    await writeFile(join(cwd, 'p.json'), '{"__proto__": {"noise": 3}, "noise": 0.1}');
    const result = await runCli(['simulate', '--params', 'p.json'], cwd);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('--params __proto__: unknown parameter "__proto__"');
    expect(await readdir(cwd)).toEqual(['p.json']);
  });
});
