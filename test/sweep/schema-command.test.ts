import { execFile } from 'node:child_process';
import { mkdir, mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';

const run = promisify(execFile);
const CLI = join(process.cwd(), 'bin', 'recallscape.js');

interface JsonSchema {
  $schema?: string;
  type?: string;
  required?: string[];
  additionalProperties?: unknown;
  properties?: Record<string, JsonSchema & { additionalProperties?: { anyOf?: JsonSchema[] } }>;
}

describe('recallscape schema', () => {
  it('prints a JSON Schema of the sweep file that requires a name and rejects unknown keys', async () => {
    const { stdout } = await run(process.execPath, [CLI, 'schema']);
    const schema = JSON.parse(stdout) as JsonSchema;
    expect(schema.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    expect(schema.type).toBe('object');
    expect(schema.required).toEqual(['name']);
    expect(schema.additionalProperties).toBe(false);
    expect(Object.keys(schema.properties ?? {})).toEqual([
      'name',
      'model',
      'seed',
      'replicates',
      'fixed',
      'vary',
      'derived',
      'sampler',
      'report',
      'refine',
      'batch',
      'jobTimeoutMs',
    ]);
    // The time limit of one job: whole milliseconds, up to a week (7 x 24 x 3600 x 1000, worked by hand).
    const limit = schema.properties?.['jobTimeoutMs'] as Record<string, unknown> | undefined;
    expect(limit?.['type']).toBe('integer');
    expect(limit?.['minimum']).toBe(1);
    expect(limit?.['maximum']).toBe(604_800_000);
    // Test models (no-op, cpu-burn) are not among the models users see.
    expect(String((schema as { description?: string }).description)).toBe(
      'A parameter sweep for recallscape. Models: bcpnn-sequences.',
    );
    expect(schema.properties?.['name']?.['pattern' as keyof JsonSchema]).toBe('^[a-z0-9][a-z0-9._-]*$');
    // Four kinds of range: list, from/to/steps, between, among.
    const ranges = schema.properties?.['vary']?.additionalProperties?.anyOf ?? [];
    expect(ranges.map((r) => Object.keys(r.properties ?? {})[0])).toEqual(['list', 'from', 'between', 'among']);
  });

  it('writes the schema to a file with --file and prints where', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'rs-schema-'));
    try {
      const out = join(dir, 'sweep.schema.json');
      const { stdout } = await run(process.execPath, [CLI, 'schema', '--file', out]);
      expect(stdout).toBe(`wrote ${out}\n`);
      const written = JSON.parse(await readFile(out, 'utf8')) as JsonSchema;
      expect(written.required).toEqual(['name']);
      expect(await readdir(dir)).toEqual(['sweep.schema.json']);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });

  it('exits with code 2 when --file cannot be written', async () => {
    const error = await run(process.execPath, [CLI, 'schema', '--file', '/nonexistent-folder/x.json']).then(
      () => undefined,
      (e: unknown) => e as { code: number; stderr: string },
    );
    expect(error?.code).toBe(2);
    expect(error?.stderr).toContain('--file /nonexistent-folder/x.json');
  });

  it('exits with code 2 when --file names a folder and leaves no temporary file behind', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'rs-schema-'));
    try {
      const folder = join(dir, 'a-folder');
      await mkdir(folder);
      const error = await run(process.execPath, [CLI, 'schema', '--file', folder]).then(
        () => undefined,
        (e: unknown) => e as { code: number; stderr: string },
      );
      expect(error?.code).toBe(2);
      expect(error?.stderr).toContain(`--file ${folder}`);
      expect(error?.stderr).not.toMatch(/\n\s+at /);
      // Only the folder itself: no hidden .a-folder.*.tmp next to it, nothing inside it.
      expect(await readdir(dir)).toEqual(['a-folder']);
      expect(await readdir(folder)).toEqual([]);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });
});
