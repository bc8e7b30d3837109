import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../queue/helpers.js';

// The test models (no-op, cpu-burn, spin, hold) live in test/fixtures/models: a command
// that is not given that folder knows only the built-in model.

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-hidden-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** No model folders from the environment either. */
const NO_MODELS = { env: { RECALLSCAPE_MODELS: '' } };

describe('test models outside the registry users and workers see', () => {
  it('refuses a sweep of a test model without --models and lists only the built-in model', async () => {
    const file = join(dir, 'burn.yaml');
    await writeFile(file, 'name: burn\nmodel: cpu-burn\n');
    const result = await runCli(['plan', file, '--calibrate', '0'], NO_MODELS);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe(
      `recallscape: ${file} is not a valid sweep file: model: unknown model "cpu-burn"; known models: bcpnn-sequences\n`,
    );
  });

  it('has no test model for simulate, and none in the JSON Schema of the sweep file', async () => {
    const simulated = await runCli(['simulate', '--model', 'no-op'], NO_MODELS);
    expect(simulated.code).toBe(2);
    expect(simulated.stderr).toContain('unknown model "no-op"');
    const schema = await runCli(['schema'], NO_MODELS);
    expect(schema.code).toBe(0);
    const description = (JSON.parse(schema.stdout) as { description: string }).description;
    expect(description).toBe('A parameter sweep for recallscape. Models: bcpnn-sequences.');
  });
});
