import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ResultStore } from '../../shared/store/result-store.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import {
  type CliResult,
  freePort,
  type OwnRedis,
  removeDir,
  runCli,
  startOwnRedis,
  tempDir,
  uniqueQueue,
} from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// Every command that talks to Redis must fail the same way: one line, exit code 1, no secret.
const PASSWORD = 'Zebra-Tulip-4417';
const WRONG = 'Wrong-Horse-9931';

let guarded: OwnRedis;
let root = '';
let sweepFile = '';
let sweepDir = '';
let deadPort = 0;

beforeAll(async () => {
  guarded = await startOwnRedis([], PASSWORD);
  root = await tempDir('errors');
  sweepFile = join(root, 'tiny.yaml');
  const text = 'name: tiny\nmodel: no-op\nreplicates: 2\n';
  await import('node:fs/promises').then((fs) => fs.writeFile(sweepFile, text));
  const store = ResultStore.at(join(root, 'results'), 'tiny');
  await store.prepare(parseSweepText(text, sweepFile));
  sweepDir = store.dir;
  deadPort = await freePort();
});

afterAll(async () => {
  await guarded?.stop();
  await removeDir(root);
});

/** Each Redis-using command with its own arguments (the URL is appended). */
function commands(): Array<{ name: string; args: string[] }> {
  // The sweep's model (no-op) is a test model: every command that reads the sweep loads it.
  const q = [...uniqueQueue().flags, ...TEST_MODEL_FLAGS];
  return [
    { name: 'submit', args: ['submit', sweepFile, '--out', join(root, 'results'), ...q] },
    { name: 'worker', args: ['worker', '--threads', '1', '--out', join(root, 'worker-out'), ...q] },
    { name: 'progress', args: ['progress', sweepDir, ...q] },
    { name: 'requeue', args: ['requeue', sweepDir, ...q] },
    { name: 'gather', args: ['gather', sweepDir, ...q] },
    { name: 'cancel', args: ['cancel', sweepDir, ...q] },
  ];
}

function expectOneCleanLine(result: CliResult, secret: string, pattern: RegExp): void {
  const lines = result.stderr.trim().split('\n');
  expect(result.code, result.stderr).toBe(1);
  expect(lines).toHaveLength(1);
  expect(lines[0]).toMatch(pattern);
  expect(result.stdout + result.stderr).not.toContain(secret);
  // No stack trace: no "    at ..." frames.
  expect(result.stderr).not.toMatch(/\n\s+at /);
}

describe('Redis failures on the command line', () => {
  it('reports a wrong password in one masked line with exit code 1 from every command', async () => {
    const url = `redis://:${WRONG}@127.0.0.1:${guarded.port}`;
    const results = await Promise.all(
      commands().map((c) => runCli([...c.args, '--redis', url, '--connect-timeout', '3000'])),
    );
    results.forEach((result, i) => {
      expect.soft(commands()[i]?.name).toBeDefined();
      expectOneCleanLine(
        result,
        WRONG,
        new RegExp(`Redis refused the password for redis://:\\*\\*\\*@127\\.0\\.0\\.1:${guarded.port}`),
      );
    });
  });

  it('reports an unreachable Redis in one masked line with exit code 1 from every command, after a bounded wait', async () => {
    const url = `redis://:${PASSWORD}@127.0.0.1:${deadPort}`;
    const results = await Promise.all(
      commands().map((c) => runCli([...c.args, '--redis', url, '--connect-timeout', '1500'])),
    );
    for (const result of results) {
      expectOneCleanLine(
        result,
        PASSWORD,
        new RegExp(
          `cannot reach Redis at redis://:\\*\\*\\*@127\\.0\\.0\\.1:${deadPort} \\(ECONNREFUSED\\); is it running and is the URL right\\?`,
        ),
      );
    }
  });

  it('reads the URL from RECALLSCAPE_REDIS_URL and masks it there too', async () => {
    const url = `redis://:${WRONG}@127.0.0.1:${guarded.port}`;
    const result = await runCli(['requeue', sweepDir, ...uniqueQueue().flags, ...TEST_MODEL_FLAGS], {
      env: { RECALLSCAPE_REDIS_URL: url },
    });
    expectOneCleanLine(result, WRONG, /Redis refused the password/);
  });

  it('says a password is needed when the URL has none', async () => {
    const result = await runCli([
      'cancel',
      sweepDir,
      '--redis',
      `redis://127.0.0.1:${guarded.port}`,
      ...uniqueQueue().flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(result.code).toBe(1);
    expect(result.stderr.trim()).toMatch(/requires a password/);
  });

  it('rejects a malformed URL as bad input (exit code 2) without showing its password', async () => {
    const result = await runCli([
      'submit',
      sweepFile,
      '--redis',
      `http://:${WRONG}@127.0.0.1:1`,
      '--out',
      join(root, 'results'),
      ...TEST_MODEL_FLAGS,
    ]);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/--redis: unsupported scheme/);
    expect(result.stdout + result.stderr).not.toContain(WRONG);
  });

  it('connects with the right password (the failures above are not a broken setup)', async () => {
    const q = uniqueQueue();
    const result = await runCli([
      'submit',
      sweepFile,
      '--redis',
      guarded.url,
      '--out',
      join(root, 'results'),
      '--json',
      ...q.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(result.code, result.stderr).toBe(0);
    expect(JSON.parse(result.stdout)).toMatchObject({ planned: 2, enqueued: 2 });
    expect(result.stdout + result.stderr).not.toContain(PASSWORD);
  });
});
