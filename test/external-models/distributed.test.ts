import { readdirSync, readFileSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { registerModelFolders } from '../../shared/models/external/model-folders.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import {
  deleteKeys,
  type Running,
  readNdjson,
  runCli,
  SHARED_REDIS,
  startCli,
  stopCli,
  uniqueQueue,
  waitFor,
} from '../queue/helpers.js';
import { EXAMPLES, isRunning, modelEnv, removeDir, tempDir, waitUntil } from './helpers.js';

// Both example models through the queue: submit, two workers sharing one
// results folder, one of them killed with SIGKILL while it serves jobs.
// Every job must end with a result, and nothing the killed worker started
// may keep running.

// One trial per queue job, so both workers take jobs of both models (a batch could hold a whole sweep).
const HOPFIELD = `name: queued-hopfield
model: hopfield-py
seed: 21
replicates: 4
batch: 1
fixed: { units: 60 }
vary:
  patterns: { list: [1, 5, 9, 13] }
  cueNoise: { list: [0, 0.2] }
`;
const FORGETTING = `name: queued-forgetting
model: forgetting-js
seed: 22
replicates: 4
batch: 1
vary:
  delayMs: { from: 0, to: 6000, steps: 7 }
  tauMs: { list: [1000, 2000, 4000] }
`;

const queue = uniqueQueue();
let base = '';
const workers: Running[] = [];

beforeAll(async () => {
  base = await tempDir('distributed');
});
afterAll(async () => {
  for (const worker of workers) await stopCli(worker, 10_000);
  await deleteKeys(SHARED_REDIS, queue.prefix);
  await removeDir(base);
});

/** Every process below `pid` (children, their children...), from /proc. */
function descendants(pid: number): number[] {
  const parentOf = new Map<number, number>();
  for (const entry of readdirSync('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    try {
      const stat = readFileSync(`/proc/${entry}/stat`, 'utf8');
      const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
      parentOf.set(Number(entry), Number(fields[1]));
    } catch {
      // Gone meanwhile.
    }
  }
  const found: number[] = [];
  let frontier = [pid];
  while (frontier.length > 0) {
    const next = [...parentOf].filter(([, parent]) => frontier.includes(parent)).map(([child]) => child);
    found.push(...next);
    frontier = next;
  }
  return found;
}

function commandOf(pid: number): string {
  try {
    return readFileSync(`/proc/${pid}/cmdline`, 'utf8').replace(/\0/g, ' ');
  } catch {
    return '';
  }
}

describe('external models through submit and two workers', () => {
  it('finish every job of both examples when one worker is killed, and leave none of its model processes behind', async () => {
    const out = join(base, 'results');
    const env = modelEnv();
    const workerArgs = (name: string) => [
      'worker',
      '--redis',
      SHARED_REDIS,
      ...queue.flags,
      '--models',
      EXAMPLES,
      '--threads',
      '1',
      '--out',
      out,
      '--name',
      name,
      '--lock-ms',
      '6000',
      '--stall-check-ms',
      '3000',
    ];
    const a = startCli(workerArgs('worker-a'), env);
    const b = startCli(workerArgs('worker-b'), env);
    workers.push(a, b);

    const planned = new Map<string, Set<string>>();
    await registerModelFolders([EXAMPLES]);
    for (const [name, text] of [
      ['queued-hopfield', HOPFIELD],
      ['queued-forgetting', FORGETTING],
    ] as const) {
      const file = join(base, `${name}.yaml`);
      await writeFile(file, text);
      planned.set(name, new Set([...expandJobs(parseSweepText(text, name))].map((j) => j.key)));
      const submit = await runCli(
        ['submit', file, '--redis', SHARED_REDIS, ...queue.flags, '--models', EXAMPLES, '--out', out],
        { env },
      );
      expect(submit.code, submit.stderr).toBe(0);
    }

    // Worker A is serving: its Python model runs, and it has written results.
    const doomed = await waitFor(
      'worker A to run the Python model and write results',
      async () => {
        const below = descendants(a.pid);
        const python = below.filter((pid) => commandOf(pid).includes('hopfield.py'));
        const records = await readNdjson(join(out, 'queued-hopfield', 'results'));
        const byA = records.filter((r) => String(r['writer']).startsWith('worker-a-'));
        return python.length > 0 && byA.length > 0 ? below : undefined;
      },
      120_000,
      100,
    ).catch((error: unknown) => {
      throw new Error(`${String(error)}\nworker A said:\n${a.output().slice(-3000)}`);
    });
    a.child.kill('SIGKILL');
    await a.exited;
    await waitUntil('every process worker A started to end', () => doomed.every((pid) => !isRunning(pid)), 30_000);

    for (const [name, keys] of planned) {
      const done = await waitFor(
        `every job of ${name}`,
        async () => {
          const records = await readNdjson(join(out, name, 'results'));
          const seen = new Set(records.map((r) => String(r['key'])));
          return [...keys].every((k) => seen.has(k)) ? seen : undefined;
        },
        240_000,
        250,
      );
      // Nothing but planned jobs, and every planned job.
      expect([...done].filter((k) => !keys.has(k))).toEqual([]);
    }
    // The surviving worker is still serving, and its own model process is there.
    expect(b.child.exitCode).toBeNull();
    for (const pid of doomed) expect(isRunning(pid), commandOf(pid)).toBe(false);
  });
});
