import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { deleteKeys, SHARED_REDIS, uniqueQueue } from '../queue/helpers.js';
import { runCli } from './cli-helpers.js';

/**
 * What the queue commands say about the state of a sweep and of Redis,
 * through the real CLI against the shared Redis on 127.0.0.1:6379 (which has
 * no password), each run under a queue prefix of its own.
 */

let dir = '';
const q = uniqueQueue();
const redis = ['--redis', SHARED_REDIS, ...q.flags];

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-queue-states-'));
  await writeFile(
    join(dir, 'queued.yaml'),
    // The built-in model: these jobs are only queued, never run (the test models need --models).
    'name: queued\nseed: 1\nreplicates: 3\nvary:\n  patternOverlap: { list: [0, 1] }\n',
  );
});

afterAll(async () => {
  await deleteKeys(SHARED_REDIS, q.prefix);
  await rm(dir, { recursive: true, force: true });
});

describe('submit', () => {
  it('warns in one line that the queue is not protected when the URL has a password Redis does not need', async () => {
    const url = SHARED_REDIS.replace('redis://', 'redis://:not-needed@');
    const result = await runCli(['submit', 'queued.yaml', '--out', 'results', '--redis', url, ...q.flags], dir);
    expect(result.code, result.stderr).toBe(0);
    // Redis answers AUTH with "called without any password configured" (Redis 7 on this machine).
    expect(result.stderr).toBe(
      'recallscape: warning: Redis at redis://:***@127.0.0.1:6379 has no password, so the one in the URL protects nothing: ' +
        'the queue is NOT protected, anyone who reaches the port can read and change it; set requirepass (or an ACL user) in Redis, ' +
        'or keep it on a private network\n',
    );
    expect(result.stdout + result.stderr).not.toContain('not-needed');
  });

  it('prints no log lines, and hints at starting workers with the environment variable and this queue', async () => {
    const result = await runCli(['submit', 'queued.yaml', '--out', 'results', ...redis], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stderr).toBe('');
    // 2 points x 3 replicates = 6 jobs, queued by the first submit.
    expect(result.stdout).toContain('in queue   6 ');
    expect(result.stdout).toContain(
      `next       start workers where RECALLSCAPE_REDIS_URL names this Redis: recallscape worker --out results --queue ${q.name} --prefix ${q.prefix}\n`,
    );
    expect(result.stdout).not.toContain('--redis');
  });
});

describe('progress of a cancelled sweep', () => {
  it('shows no rate or time left, says the sweep is stopped and gives the command that resumes it', async () => {
    const cancelled = await runCli(['cancel', 'results/queued', '--json', ...redis], dir);
    expect(cancelled.code, cancelled.stderr).toBe(0);
    expect(cancelled.stderr).toBe('');
    expect(JSON.parse(cancelled.stdout)).toMatchObject({ name: 'queued', removed: 6, active: 0 });

    const result = await runCli(['progress', 'results/queued', ...redis], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stderr).toBe('');
    expect(result.stdout).not.toMatch(/^rate /m);
    expect(result.stdout).not.toContain('time left');
    expect(result.stdout).toContain('state     stopped: nothing is queued or running, and 6 job(s) have no result\n');
    expect(result.stdout).toContain(
      `resume    recallscape requeue results/queued --queue ${q.name} --prefix ${q.prefix}\n`,
    );
  });

  it('gives the state and the resume command in --json, with no rate', async () => {
    const result = await runCli(['progress', 'results/queued', '--json', ...redis], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(JSON.parse(result.stdout)).toMatchObject({
      state: 'stopped',
      perMinute: null,
      etaSeconds: null,
      finished: 0,
      planned: 6,
      resume: `recallscape requeue results/queued --queue ${q.name} --prefix ${q.prefix}`,
    });
  });

  it('stops following a stopped sweep instead of waiting for ever', async () => {
    const result = await runCli(['progress', 'results/queued', '--follow', ...redis], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toContain('stopped: nothing queued or running');
    expect(result.stdout).toContain('resume    recallscape requeue results/queued');
  });

  it('is running again after the resume command, and requeue --json says how many were added', async () => {
    const requeued = await runCli(['requeue', 'results/queued', '--json', ...redis], dir);
    expect(requeued.code, requeued.stderr).toBe(0);
    expect(requeued.stderr).toBe('');
    expect(JSON.parse(requeued.stdout)).toMatchObject({ enqueued: 6 });
    const result = await runCli(['progress', 'results/queued', '--json', ...redis], dir);
    expect(JSON.parse(result.stdout)).toMatchObject({ state: 'running', queue: { waiting: 6 } });
  });

  it('gather --json prints its counts and no log lines', async () => {
    const result = await runCli(['gather', 'results/queued', '--json', ...redis], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stderr).toBe('');
    expect(JSON.parse(result.stdout)).toMatchObject({ name: 'queued', found: 0, copied: 0 });
  });
});
