import { type ChildProcess, spawn } from 'node:child_process';
import { mkdir, readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { FIXTURES, isRunning, removeDir, tempDir, waitUntil } from './helpers.js';

// A process holding a program model in a worker thread (fixtures/host.mjs,
// built code from dist/) starts a job that never ends; the model program
// itself starts a grandchild (`sleep 1000`). Whatever happens to the host,
// nothing it started may keep running.

let base = '';
const started: ChildProcess[] = [];

beforeAll(async () => {
  base = await tempDir('orphans');
});
afterAll(async () => {
  for (const child of started) if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
  await removeDir(base);
});

interface Host {
  readonly child: ChildProcess;
  readonly output: () => string;
  readonly pidDir: string;
}

async function startHost(name: string): Promise<Host> {
  const pidDir = join(base, name);
  await mkdir(pidDir);
  const child = spawn(process.execPath, [join(FIXTURES, 'host.mjs'), join(FIXTURES, 'misbehave'), 'hang-with-child'], {
    env: { ...process.env, MISBEHAVE_PID_DIR: pidDir },
    stdio: ['pipe', 'pipe', 'inherit'],
  });
  started.push(child);
  let output = '';
  child.stdout?.on('data', (d: Buffer) => (output += d.toString()));
  return { child, output: () => output, pidDir };
}

/** Supervisor, model program and the model's own child, once all three are running. */
async function processesOf(host: Host): Promise<number[]> {
  let pids: number[] = [];
  await waitUntil(
    'the model and its child to start',
    async () => {
      const match = /running (\d+)/.exec(host.output());
      const files = await readdir(host.pidDir);
      const model = files.filter((f) => f.startsWith('model-'));
      const child = files.filter((f) => f.startsWith('child-'));
      if (match === null || model.length !== 1 || child.length !== 1) return false;
      pids = [Number(match[1]), ...[...model, ...child].map((f) => Number(f.split('-')[1]))];
      return true;
    },
    60_000,
  );
  return pids;
}

describe('the processes of a program model', () => {
  it('all end when the process holding them is killed with SIGKILL', async () => {
    const host = await startHost('kill-9');
    const pids = await processesOf(host);
    expect(pids).toHaveLength(3);
    for (const pid of pids) expect(isRunning(pid), `pid ${pid} before the kill`).toBe(true);
    host.child.kill('SIGKILL');
    await waitUntil('every process of the model to end', () => pids.every((pid) => !isRunning(pid)), 30_000);
    for (const pid of pids) expect(isRunning(pid), `pid ${pid} after the kill`).toBe(false);
  });

  it('all end when only the worker thread holding them is terminated, and the process lives on', async () => {
    const host = await startHost('thread');
    const pids = await processesOf(host);
    host.child.stdin?.write('terminate\n');
    await waitUntil('the thread to end', () => host.output().includes('thread ended'));
    await waitUntil('every process of the model to end', () => pids.every((pid) => !isRunning(pid)), 30_000);
    expect(host.child.exitCode).toBeNull();
    host.child.kill('SIGTERM');
  });
});
