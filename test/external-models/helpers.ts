import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { cp, mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The built supervisor (npm test builds first); the tests load model sources from the repository. */
export const SUPERVISOR = new URL('../../dist/shared/models/external/supervisor.js', import.meta.url);
export const EXAMPLES = fileURLToPath(new URL('../../examples/models', import.meta.url));
export const FIXTURES = fileURLToPath(new URL('./fixtures', import.meta.url));
export const ROOT = fileURLToPath(new URL('../..', import.meta.url));
export const CLI = join(ROOT, 'bin', 'recallscape.js');

export async function tempDir(label: string): Promise<string> {
  return mkdtemp(join(tmpdir(), `recallscape-ext-${label}-`));
}

export async function removeDir(dir: string): Promise<void> {
  if (dir !== '') await rm(dir, { recursive: true, force: true });
}

/** A model folder in `parent` with this description (and optional extra files). */
export async function writeModelFolder(
  parent: string,
  name: string,
  description: unknown,
  files: Readonly<Record<string, string>> = {},
): Promise<string> {
  const folder = join(parent, name);
  await mkdir(folder, { recursive: true });
  const text = typeof description === 'string' ? description : JSON.stringify(description, null, 2);
  await writeFile(join(folder, 'recallscape-model.json'), text);
  for (const [file, content] of Object.entries(files)) await writeFile(join(folder, file), content);
  return folder;
}

/** A copy of a fixture or example folder under `parent`. */
export async function copyFolder(from: string, parent: string, name: string): Promise<string> {
  const to = join(parent, name);
  await cp(from, to, { recursive: true });
  return to;
}

export async function readJson(path: string): Promise<Record<string, unknown>> {
  return JSON.parse(await readFile(path, 'utf8')) as Record<string, unknown>;
}

/**
 * Whether a process is still running. A zombie (exited, waiting to be
 * reaped by its new parent) counts as gone: it runs nothing and holds no
 * resources but its process-table entry.
 */
export function isRunning(pid: number): boolean {
  try {
    process.kill(pid, 0);
  } catch {
    return false;
  }
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    // Field 3, after the parenthesised command name.
    const state = stat.slice(stat.lastIndexOf(')') + 2, stat.lastIndexOf(')') + 3);
    return state !== 'Z' && state !== 'X';
  } catch {
    return false;
  }
}

/** Resolve once `check` returns true, polling; reject after `timeoutMs`. */
export async function waitUntil(
  what: string,
  check: () => boolean | Promise<boolean>,
  timeoutMs = 30_000,
): Promise<void> {
  const until = Date.now() + timeoutMs;
  while (Date.now() < until) {
    if (await check()) return;
    await new Promise((r) => setTimeout(r, 50));
  }
  throw new Error(`timed out waiting for ${what}`);
}

/** A minimal valid program description; `over` replaces fields. */
export function programDescription(over: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    id: 'tiny',
    version: '1',
    kind: 'program',
    command: ['node', 'tiny.mjs'],
    parameters: {
      type: 'object',
      properties: {
        rate: { type: 'number', minimum: 0, maximum: 10, default: 1, unit: 'Hz', description: 'Firing rate' },
        count: { type: 'integer', minimum: 1, maximum: 50, default: 3, unit: 'count', description: 'Items stored' },
      },
    },
    metrics: {
      recalled: { type: 'boolean', description: 'Recall succeeded' },
      error: { type: 'number', description: 'Distance to the target' },
    },
    successMetric: 'recalled',
    timeoutMs: 5000,
    ...over,
  };
}

/**
 * Environment for commands that start the Python example: the system's
 * python3 first on PATH when there is one, because a version manager's shim
 * in front of it costs seconds per start on a loaded machine (the example's
 * description still just says "python3").
 */
export function modelEnv(extra: Record<string, string> = {}): NodeJS.ProcessEnv {
  const path = existsSync('/usr/bin/python3') ? `/usr/bin:${process.env['PATH'] ?? ''}` : (process.env['PATH'] ?? '');
  return { ...process.env, RECALLSCAPE_LOG_LEVEL: 'info', RECALLSCAPE_DEBUG: '', PATH: path, ...extra };
}

export interface CliRun {
  readonly code: number | null;
  readonly stdout: string;
  readonly stderr: string;
}

/** The built command line, run to the end in `cwd` with `env`. */
export function runCliIn(args: readonly string[], cwd: string, env: NodeJS.ProcessEnv = modelEnv()): Promise<CliRun> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [CLI, ...args], { cwd, env, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d: Buffer) => (stdout += d.toString()));
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', reject);
    child.on('close', (code) => resolve({ code, stdout, stderr }));
  });
}
