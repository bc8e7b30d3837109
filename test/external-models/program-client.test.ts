import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ModelFailure } from '../../shared/errors.js';
import type { ExternalModel } from '../../shared/models/external/external-model.js';
import { loadModelFolder } from '../../shared/models/external/load-model-folder.js';
import {
  EXAMPLES,
  FIXTURES,
  isRunning,
  programDescription,
  removeDir,
  SUPERVISOR,
  tempDir,
  waitUntil,
  writeModelFolder,
} from './helpers.js';

// The program side of external models: the fixture program misbehaves on
// request (params.mode); the client must turn each case into a failure of
// the right kind and keep serving.

let model: ExternalModel;
let base = '';

beforeAll(async () => {
  base = await tempDir('client');
  model = await loadModelFolder(join(FIXTURES, 'misbehave'), { supervisor: SUPERVISOR });
});
afterAll(async () => {
  await model?.close();
  await removeDir(base);
});

function params(mode: string, value = 0): Record<string, unknown> {
  return model.params.parse({ mode, value }) as Record<string, unknown>;
}

/** The ModelFailure a job ends with (fails the test if it succeeds). */
async function failureOf(job: Promise<unknown>): Promise<ModelFailure> {
  try {
    await job;
  } catch (error) {
    if (error instanceof ModelFailure) return error;
    throw error;
  }
  throw new Error('the job succeeded');
}

async function okJob(value: number, key = `ok-${value}`): Promise<Record<string, unknown>> {
  const output = await model.runAsync(params('ok', value), 1, { key });
  return output.metrics as Record<string, unknown>;
}

describe('a program model', () => {
  it('serves many jobs from one process and copies the success metric into success', async () => {
    const pidsBefore = await okJob(1);
    expect(pidsBefore).toEqual({ ok: true, value: 1, success: true });
    const pid = model.processId();
    expect(pid).toBeDefined();
    for (let i = 2; i <= 5; i++) expect((await okJob(i))['value']).toBe(i);
    expect(model.processId()).toBe(pid);
  });

  it('fails a hung job as a timeout with its stderr, kills the program, and serves the next job from a new one', async () => {
    await okJob(1);
    const hungPid = model.processId() as number;
    const failure = await failureOf(model.runAsync(params('hang'), 1, { key: 'hang', timeoutMs: 1500 }));
    expect(failure.kind).toBe('timeout');
    // Not retried: the same job with the same limit would run over again (docs/own-model.md).
    expect(failure.retryable).toBe(false);
    expect(failure.message).toMatch(/no reply within the time limit of 1500 ms; the program was killed/);
    expect(failure.message).toMatch(/last stderr lines of the model:[\s\S]*going to sleep forever/);
    await waitUntil('the hung program to be gone', () => !isRunning(hungPid));
    expect(await okJob(7)).toMatchObject({ value: 7 });
    expect(model.processId()).not.toBe(hungPid);
  });

  it('fails a job whose program crashes as crashed, with its exit code and stderr, then restarts it', async () => {
    const failure = await failureOf(model.runAsync(params('crash'), 1, { key: 'crash' }));
    expect(failure.kind).toBe('crashed');
    expect(failure.retryable).toBe(true);
    expect(failure.message).toMatch(/the program exited with code 3 before it replied/);
    expect(failure.message).toMatch(/about to crash on purpose/);
    expect(await okJob(8)).toMatchObject({ value: 8 });
  });

  it('fails a reply that is not JSON, quoting it, and restarts the program', async () => {
    await okJob(1);
    const before = model.processId();
    const failure = await failureOf(model.runAsync(params('garbage'), 1, { key: 'garbage' }));
    expect(failure.kind).toBe('exception');
    expect(failure.message).toMatch(/the reply is not JSON: "this is not json"/);
    expect(failure.message).toMatch(/printing garbage/);
    expect(await okJob(9)).toMatchObject({ value: 9 });
    expect(model.processId()).not.toBe(before);
  });

  it('fails metrics of the wrong type or a missing metric without retries, and keeps the process', async () => {
    await okJob(1);
    const pid = model.processId();
    const wrong = await failureOf(model.runAsync(params('wrong-types'), 1, { key: 'wrong' }));
    expect(wrong.kind).toBe('exception');
    expect(wrong.retryable).toBe(false);
    expect(wrong.message).toMatch(/wrong metrics: metric "ok" must be true or false, got "yes"/);
    expect(wrong.message).toMatch(/metric "value" must be a finite number, got "12"/);
    const missing = await failureOf(model.runAsync(params('missing-metric'), 1, { key: 'missing' }));
    expect(missing.message).toMatch(/metric "value" is missing/);
    expect(await okJob(10)).toMatchObject({ value: 10 });
    expect(model.processId()).toBe(pid);
  });

  it('catches a line printed outside the protocol: the next job fails and a fresh process serves the one after', async () => {
    const stray = await model.runAsync(params('stray', 3), 1, { key: 'stray' });
    expect(stray.metrics['value']).toBe(3);
    // The extra line may still be on its way: the next job meets it either before or as its reply.
    const next = await failureOf(model.runAsync(params('ok', 4), 1, { key: 'after-stray' }));
    expect(next.kind).toBe('exception');
    expect(next.message).toMatch(
      /(outside the protocol|not JSON): "a debugging line printed after the reply"; stdout is for replies only/,
    );
    expect(await okJob(11)).toMatchObject({ value: 11 });
  });

  it('fails a reply for another key, and passes on an error the program reports', async () => {
    const other = await failureOf(model.runAsync(params('wrong-key'), 1, { key: 'mine' }));
    expect(other.message).toMatch(/the reply is not for this job: expected "key": "mine", got "\\"someone-else\\""/);
    const reported = await failureOf(model.runAsync(params('error'), 1, { key: 'err' }));
    expect(reported.kind).toBe('exception');
    expect(reported.retryable).toBe(true);
    expect(reported.message).toMatch(/the program reported an error: deliberate failure/);
  });

  it('fails every job as crashed with a clear reason when the program cannot be started', async () => {
    const folder = await writeModelFolder(
      base,
      'missing-program',
      programDescription({ command: ['no-such-program-here'] }),
    );
    const broken = await loadModelFolder(folder, { supervisor: SUPERVISOR });
    try {
      const failure = await failureOf(broken.runAsync(broken.params.parse({}), 1, { key: 'x' }));
      expect(failure.kind).toBe('crashed');
      expect(failure.message).toMatch(/cannot start no-such-program-here: not found/);
    } finally {
      await broken.close();
    }
  });

  it('runs the Python example: few stored patterns are recalled, too many are not', async () => {
    const hopfield = await loadModelFolder(join(EXAMPLES, 'hopfield-py'), { supervisor: SUPERVISOR });
    try {
      // Capacity of the Hebbian network is about 0.138 units per pattern for
      // large networks (Amit, Gutfreund and Sompolinsky 1985); 3 patterns in
      // 100 units are far below it, 40 far above.
      let low = 0;
      let high = 0;
      for (let seed = 1; seed <= 10; seed++) {
        const few = await hopfield.runAsync(hopfield.params.parse({ patterns: 3 }), seed, { key: `few-${seed}` });
        const many = await hopfield.runAsync(hopfield.params.parse({ patterns: 40 }), seed, { key: `many-${seed}` });
        if (few.metrics.success) low++;
        if (many.metrics.success) high++;
      }
      expect(low).toBeGreaterThanOrEqual(9);
      expect(high).toBeLessThanOrEqual(2);
      // A trace on request: one row per sweep, one column per stored pattern, starting at the cue's overlap.
      const traced = await hopfield.runAsync(hopfield.params.parse({ patterns: 3, cueNoise: 0.1 }), 1, {
        key: 'trace',
        trace: true,
      });
      const panel = traced.trace?.[0];
      expect(panel?.seriesLabels).toEqual(['pattern 0', 'pattern 1', 'pattern 2']);
      // 10 of 100 units flipped: overlap 1 - 2 x 0.1 = 0.8 with the cued pattern before any update.
      expect(panel?.values[0]).toBeCloseTo(0.8, 12);
    } finally {
      await hopfield.close();
    }
  });
});
