import { type ChildProcess, spawn } from 'node:child_process';
import { readdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The real command line (runs dist/; npm test builds first). */
export const CLI = fileURLToPath(new URL('../../bin/recallscape.js', import.meta.url));

export interface CliResult {
  readonly code: number | null;
  readonly signal: NodeJS.Signals | null;
  readonly stdout: string;
  readonly stderr: string;
}

export interface RunningCli {
  readonly child: ChildProcess;
  readonly done: Promise<CliResult>;
}

/** Start `node bin/recallscape.js ...args` in `cwd`; stdout is a pipe, not a terminal. */
export function startCli(args: readonly string[], cwd: string): RunningCli {
  const child = spawn(process.execPath, [CLI, ...args], {
    cwd,
    env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'info', RECALLSCAPE_DEBUG: '' },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let stdout = '';
  let stderr = '';
  child.stdout?.on('data', (d: Buffer) => (stdout += d.toString()));
  child.stderr?.on('data', (d: Buffer) => (stderr += d.toString()));
  const done = new Promise<CliResult>((resolve, reject) => {
    child.on('error', reject);
    child.on('close', (code, signal) => resolve({ code, signal, stdout, stderr }));
  });
  return { child, done };
}

export function runCli(args: readonly string[], cwd: string): Promise<CliResult> {
  return startCli(args, cwd).done;
}

export interface ShardLine {
  readonly file: string;
  readonly text: string;
  /** False for a last line without a newline (a write cut short). */
  readonly complete: boolean;
}

/** Every line of every .ndjson file in a folder (none if it does not exist). */
export async function shardLines(folder: string): Promise<ShardLine[]> {
  let names: string[];
  try {
    names = (await readdir(folder)).filter((n) => n.endsWith('.ndjson')).sort();
  } catch {
    return [];
  }
  const lines: ShardLine[] = [];
  for (const name of names) {
    const text = await readFile(join(folder, name), 'utf8');
    const parts = text.split('\n');
    parts.forEach((part, i) => {
      if (part === '') return;
      lines.push({ file: name, text: part, complete: i < parts.length - 1 });
    });
  }
  return lines;
}

/** Complete records of a results or failures folder, parsed. */
export async function shardRecords(folder: string): Promise<Array<Record<string, unknown>>> {
  return (await shardLines(folder)).filter((l) => l.complete).map((l) => JSON.parse(l.text) as Record<string, unknown>);
}

/** Resolve once `check` returns true, polling every `everyMs`; reject after `timeoutMs`. */
export async function waitFor(check: () => Promise<boolean>, timeoutMs: number, everyMs = 40): Promise<void> {
  const until = Date.now() + timeoutMs;
  while (Date.now() < until) {
    if (await check()) return;
    await new Promise((r) => setTimeout(r, everyMs));
  }
  throw new Error(`condition not met within ${timeoutMs} ms`);
}

/** A stack trace line as node prints it. */
export const STACK_LINE = /\n\s+at .+\(.+:\d+:\d+\)|\n\s+at .+:\d+:\d+/;
