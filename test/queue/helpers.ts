import { type ChildProcess, spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { Redis } from 'ioredis';
import { afterEach, beforeEach } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';

/** The repository root (tests run the built CLI from here). */
export const ROOT = resolve(import.meta.dirname, '..', '..');
export const CLI = join(ROOT, 'bin', 'recallscape.js');
/** The shared Redis every integration test may use (never FLUSHALL it). */
export const SHARED_REDIS = 'redis://127.0.0.1:6379';

/** A queue name and key prefix nobody else uses, as CLI flags and as values. */
export function uniqueQueue(): { name: string; prefix: string; flags: string[] } {
  const tag = randomBytes(4).toString('hex');
  const name = `rs-test-${tag}`;
  const prefix = `rst${tag}`;
  return { name, prefix, flags: ['--queue', name, '--prefix', prefix] };
}

export async function tempDir(label: string): Promise<string> {
  return mkdtemp(join(tmpdir(), `rs-queue-${label}-`));
}

export async function removeDir(dir: string): Promise<void> {
  await rm(dir, { recursive: true, force: true });
}

/** Delete every key under a prefix (SCAN, not KEYS, so a busy server is not blocked). */
export async function deleteKeys(url: string, prefix: string): Promise<void> {
  const client = new Redis(url, { lazyConnect: true, maxRetriesPerRequest: 1 });
  try {
    await client.connect();
    let cursor = '0';
    do {
      const [next, keys] = await client.scan(cursor, 'MATCH', `${prefix}:*`, 'COUNT', 1000);
      cursor = next;
      if (keys.length > 0) await client.del(...keys);
    } while (cursor !== '0');
  } finally {
    client.disconnect();
  }
}

export interface CliResult {
  readonly code: number | null;
  readonly signal: NodeJS.Signals | null;
  readonly stdout: string;
  readonly stderr: string;
}

/** Run the real CLI to completion. */
export function runCli(
  args: readonly string[],
  options: { env?: NodeJS.ProcessEnv; timeoutMs?: number } = {},
): Promise<CliResult> {
  return new Promise((done, fail) => {
    const child = spawn(process.execPath, [CLI, ...args], {
      cwd: ROOT,
      env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'warn', ...options.env },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d: Buffer) => (stdout += d.toString()));
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    const timer = setTimeout(() => child.kill('SIGKILL'), options.timeoutMs ?? 90_000);
    child.on('error', fail);
    child.on('close', (code, signal) => {
      clearTimeout(timer);
      done({ code, signal, stdout, stderr });
    });
  });
}

/** A CLI process left running (a worker); its output is collected as it comes. */
/** `submit FILE --json` of a sweep of the test models to the shared Redis, into `out`, on `queue`. */
export function submitJson(
  file: string,
  out: string,
  queue: { readonly flags: readonly string[] },
): Promise<CliResult> {
  return runCli(['submit', file, '--redis', SHARED_REDIS, '--out', out, '--json', ...queue.flags, ...TEST_MODEL_FLAGS]);
}

export interface Running {
  readonly child: ChildProcess;
  readonly pid: number;
  output(): string;
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

export function startCli(args: readonly string[], env: NodeJS.ProcessEnv = {}): Running {
  const child = spawn(process.execPath, [CLI, ...args], {
    cwd: ROOT,
    env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'info', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let text = '';
  child.stdout?.on('data', (d: Buffer) => (text += d.toString()));
  child.stderr?.on('data', (d: Buffer) => (text += d.toString()));
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((done) => {
    child.on('close', (code, signal) => done({ code, signal }));
  });
  if (child.pid === undefined) throw new Error('could not start the CLI');
  return { child, pid: child.pid, output: () => text, exited };
}

/** Stop a running CLI: SIGTERM, then SIGKILL if it does not leave. */
export async function stopCli(running: Running, graceMs = 20_000): Promise<void> {
  if (running.child.exitCode !== null || running.child.signalCode !== null) return;
  running.child.kill('SIGTERM');
  const timer = setTimeout(() => running.child.kill('SIGKILL'), graceMs);
  await running.exited;
  clearTimeout(timer);
}

/** Poll until `check` returns a value other than undefined, or fail after `timeoutMs`. */
export async function waitFor<T>(
  what: string,
  check: () => Promise<T | undefined>,
  timeoutMs = 60_000,
  everyMs = 200,
): Promise<T> {
  const until = Date.now() + timeoutMs;
  for (;;) {
    const value = await check();
    if (value !== undefined) return value;
    if (Date.now() > until) throw new Error(`timed out waiting for ${what}`);
    await sleep(everyMs);
  }
}

/** Every JSON line of every .ndjson file in a folder (missing folder: none). */
export async function readNdjson(folder: string): Promise<Array<Record<string, unknown>>> {
  let names: string[];
  try {
    names = (await readdir(folder)).filter((n) => n.endsWith('.ndjson')).sort();
  } catch {
    return [];
  }
  const out: Array<Record<string, unknown>> = [];
  for (const name of names) {
    const text = await readFile(join(folder, name), 'utf8');
    for (const line of text.split('\n')) {
      if (line.trim() === '') continue;
      out.push(JSON.parse(line) as Record<string, unknown>);
    }
  }
  return out;
}

/** A free TCP port on the loopback interface. */
export function freePort(): Promise<number> {
  return new Promise((done, fail) => {
    const server = createServer();
    server.on('error', fail);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      const port = typeof address === 'object' && address !== null ? address.port : 0;
      server.close(() => done(port));
    });
  });
}

export interface OwnRedis {
  readonly url: string;
  readonly port: number;
  stop(): Promise<void>;
}

/**
 * A private redis-server on a free port, without persistence, for tests that
 * wipe it or need a password. Stopped (SIGTERM, then SIGKILL) by `stop()`.
 */
export async function startOwnRedis(extraArgs: readonly string[] = [], password?: string): Promise<OwnRedis> {
  const port = await freePort();
  const args = ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no', ...extraArgs];
  if (password !== undefined) args.push('--requirepass', password);
  const child = spawn('redis-server', args, { stdio: 'ignore' });
  const url =
    password === undefined ? `redis://127.0.0.1:${port}` : `redis://:${encodeURIComponent(password)}@127.0.0.1:${port}`;
  await waitFor(
    `redis-server on port ${port}`,
    async () => {
      const probe = new Redis(url, { lazyConnect: true, retryStrategy: () => null, maxRetriesPerRequest: 0 });
      probe.on('error', () => undefined);
      try {
        await probe.connect();
        return (await probe.ping()) === 'PONG' ? true : undefined;
      } catch {
        return undefined;
      } finally {
        probe.disconnect();
      }
    },
    15_000,
    100,
  );
  return {
    url,
    port,
    async stop() {
      if (child.exitCode !== null || child.signalCode !== null) return;
      const closed = new Promise((done) => child.on('close', done));
      child.kill('SIGTERM');
      const timer = setTimeout(() => child.kill('SIGKILL'), 5_000);
      await closed;
      clearTimeout(timer);
    },
  };
}

/** A direct ioredis client for inspecting the queue from a test. */
export async function inspector(url: string): Promise<Redis> {
  const client = new Redis(url, { lazyConnect: true, maxRetriesPerRequest: 2 });
  await client.connect();
  return client;
}

/** Whether a process id is alive (signal 0 checks without touching it). */
export function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

/** Process ids whose parent is `pid`, from /proc (Linux). */
export async function childrenOf(pid: number): Promise<number[]> {
  const out: number[] = [];
  for (const entry of await readdir('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    try {
      const stat = await readFile(`/proc/${entry}/stat`, 'utf8');
      // Field 4 of /proc/<pid>/stat is the parent pid; the command name (field 2) may hold spaces, so split after ')'.
      const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
      if (Number(fields[1]) === pid) out.push(Number(entry));
    } catch {
      // The process ended while we looked.
    }
  }
  return out;
}

/** What a queue test needs for each test: a scratch folder, a queue of its own and the processes it started. */
export interface QueueSandbox {
  readonly root: string;
  readonly queue: ReturnType<typeof uniqueQueue>;
  /** Push every started process here: each is stopped after its test. */
  readonly started: Running[];
}

/**
 * Give every test of the file a fresh folder and queue, and afterwards stop
 * the processes it started, delete the queue's keys and remove the folder.
 * Call at the top level of a test file; read the fields inside tests.
 */
export function useQueueSandbox(label: string, stopGraceMs = 5_000): QueueSandbox {
  const box = { root: '', queue: uniqueQueue(), started: [] as Running[] };
  beforeEach(async () => {
    box.root = await tempDir(label);
    box.queue = uniqueQueue();
  });
  afterEach(async () => {
    for (const running of box.started.splice(0)) await stopCli(running, stopGraceMs);
    await deleteKeys(SHARED_REDIS, box.queue.prefix);
    await removeDir(box.root);
  });
  return box;
}
