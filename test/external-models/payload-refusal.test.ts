import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { Queue } from 'bullmq';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import { registerModelFolders } from '../../shared/models/external/model-folders.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { runAnyJob } from '../../worker/run-job.js';
import {
  deleteKeys,
  inspector,
  type Running,
  SHARED_REDIS,
  startCli,
  stopCli,
  uniqueQueue,
  waitFor,
} from '../queue/helpers.js';
import { EXAMPLES, modelEnv, removeDir, tempDir, writeModelFolder } from './helpers.js';

// A job names a model id and version, nothing else. Payloads that try to
// bring a command, a path or code with them are refused without running
// anything, in the job runner itself and in a real worker.

let base = '';
let marker = '';
beforeAll(async () => {
  base = await tempDir('payload');
  marker = join(base, 'pwned');
  await registerModelFolders([EXAMPLES]);
});
afterAll(async () => {
  await removeDir(base);
});

function validPayload(): Record<string, unknown> {
  const sweep = parseSweepText('name: refusal\nmodel: forgetting-js\n', 'inline');
  const job = expandJobs(sweep).next().value;
  if (job === undefined) throw new Error('no job');
  return { ...toPayload(sweep, job) };
}

const context = { writer: 'test', run: 'r1' };

/** A valid payload naming another model, its key and seed made to match (so the worker's identity check passes). */
function namingModel(model: string): Record<string, unknown> {
  const payload = validPayload() as {
    modelVersion: string;
    params: Record<string, unknown>;
    replicate: number;
    rootSeed: number;
  };
  const key = jobKey(model, payload.modelVersion, payload.params, payload.replicate);
  return { ...payload, model, key, seed: jobSeed(payload.rootSeed, key) };
}

function hostile(): Record<string, Record<string, unknown>> {
  return {
    command: { ...validPayload(), command: ['sh', '-c', `touch ${marker}`] },
    module: { ...validPayload(), module: join(base, 'evil.mjs') },
    code: { ...validPayload(), code: `require('fs').writeFileSync(${JSON.stringify(marker)}, '')` },
    'model-path': namingModel(join(base, 'evil')),
    'model-relative': namingModel('../evil'),
  };
}

describe('a job payload', () => {
  it('runs when it names a registered model and nothing else', async () => {
    const outcome = await runAnyJob(validPayload(), context);
    expect(outcome.ok).toBe(true);
  });

  it('is refused when it carries a command, a module path or code, or names a model by path', async () => {
    // A model folder at the path the hostile payloads name: never registered, so never run.
    await writeModelFolder(base, 'evil', { id: 'evil' }, { 'evil.mjs': '' });
    const refused = hostile();
    for (const [what, payload] of Object.entries(refused)) {
      const outcome = await runAnyJob(payload, context);
      expect(outcome.ok, what).toBe(false);
      if (outcome.ok) continue;
      expect(outcome.retryable, what).toBe(false);
      if (what.startsWith('model-')) {
        expect(outcome.kind, what).toBe('unsupported');
        expect(outcome.message, what).toMatch(/this worker has no model/);
      } else {
        expect(outcome.kind, what).toBe('invalid');
        expect(outcome.message, what).toMatch(new RegExp(`payload\\.${what}: unknown field "${what}"`));
      }
    }
    expect(existsSync(marker)).toBe(false);
  });
});

describe('a worker given such payloads', () => {
  const queue = uniqueQueue();
  let worker: Running | undefined;
  afterAll(async () => {
    if (worker !== undefined) await stopCli(worker, 10_000);
    await deleteKeys(SHARED_REDIS, queue.prefix);
  });

  it('fails them at once without running anything, and runs the valid job after them', async () => {
    const out = join(base, 'results');
    worker = startCli(
      ['worker', '--redis', SHARED_REDIS, ...queue.flags, '--models', EXAMPLES, '--threads', '1', '--out', out],
      modelEnv(),
    );
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(queue.name, { connection: client.duplicate(), prefix: queue.prefix });
    try {
      const opts = { attempts: 4, backoff: { type: 'exponential', delay: 1_000 } };
      for (const [what, payload] of Object.entries(hostile()))
        await q.add('hostile', payload, { ...opts, jobId: what });
      await q.add('valid', validPayload(), { ...opts, jobId: 'valid' });
      await waitFor(
        'the valid job to complete',
        async () => ((await q.getJobState('valid')) === 'completed' ? true : undefined),
        120_000,
        250,
      );
      for (const what of Object.keys(hostile())) {
        const job = await q.getJob(what);
        expect(await job?.getState(), what).toBe('failed');
        expect(job?.attemptsMade, what).toBe(1);
        expect(job?.failedReason, what).toMatch(what.startsWith('model-') ? /^unsupported: / : /^invalid: /);
      }
    } finally {
      await q.close();
      client.disconnect();
    }
    expect(existsSync(marker)).toBe(false);
    expect(worker.child.exitCode).toBeNull();
  });
});
