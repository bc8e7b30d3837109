import { execFile } from 'node:child_process';
import { cp, lstat, mkdir, mkdtemp, readdir, readFile, rm, symlink, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { delimiter, dirname, join } from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, shardRecords } from '../cli/cli-helpers.js';
import { ROOT } from '../queue/helpers.js';

const exec = promisify(execFile);

/**
 * The install documented in README.md and docs/running.md, done for real:
 * `npm pack` in a copy of the clone (its prepack builds dist/), then
 * `npm install -g` of that tarball into a scratch prefix, then the command
 * from PATH in a folder outside the clone.
 *
 * The copy keeps this test from rebuilding the dist/ that other test files
 * run meanwhile. Dependency tarballs come from the npm cache that `npm ci`
 * filled; npm still needs the registry's package metadata to resolve a
 * local tarball's dependencies (it ignores a shrinkwrap there), so the
 * install runs with --prefer-offline, which asks the registry only for what
 * the cache lacks.
 */

let scratch: string;
let prefix: string;
let tarball: string;
let version: string;

/** The environment of the npm child processes: without what `npm test` set for this project. */
function npmEnv(): NodeJS.ProcessEnv {
  const env: NodeJS.ProcessEnv = {};
  for (const [key, value] of Object.entries(process.env)) {
    const keep =
      !key.startsWith('npm_') || ['npm_config_cache', 'npm_config_registry', 'npm_config_userconfig'].includes(key);
    if (keep) env[key] = value;
  }
  return env;
}

/** PATH with the scratch prefix's bin first, and node (for the `#!/usr/bin/env node` line). */
function installedPath(): string {
  return [join(prefix, 'bin'), dirname(process.execPath), '/usr/bin', '/bin'].join(delimiter);
}

function installed(args: readonly string[], cwd: string): Promise<{ code: number; stdout: string; stderr: string }> {
  return exec('recallscape', [...args], {
    cwd,
    env: { PATH: installedPath(), HOME: scratch, RECALLSCAPE_LOG_LEVEL: 'warn' },
    maxBuffer: 16 * 1024 * 1024,
  }).then(
    ({ stdout, stderr }) => ({ code: 0, stdout, stderr }),
    (error: { code?: number; stdout?: string; stderr?: string }) => ({
      code: typeof error.code === 'number' ? error.code : -1,
      stdout: error.stdout ?? '',
      stderr: error.stderr ?? String(error),
    }),
  );
}

beforeAll(async () => {
  scratch = await mkdtemp(join(tmpdir(), 'rs-install-'));
  const clone = join(scratch, 'clone');
  prefix = join(scratch, 'prefix');
  version = (JSON.parse(await readFile(join(ROOT, 'package.json'), 'utf8')) as { version: string }).version;

  // The clone as git sees it (tracked and new files, nothing ignored): no dist/, no results/.
  const { stdout } = await exec('git', ['ls-files', '--cached', '--others', '--exclude-standard', '-z'], { cwd: ROOT });
  for (const file of stdout.split('\0').filter((f) => f !== '')) {
    try {
      await cp(join(ROOT, file), join(clone, file), { recursive: false });
    } catch (error) {
      // A file deleted in the work tree but still tracked is simply not there.
      if ((error as NodeJS.ErrnoException).code !== 'ENOENT') throw error;
    }
  }
  // `npm ci` in the copy would download again; the clone's node_modules is the same lock file's.
  await symlink(join(ROOT, 'node_modules'), join(clone, 'node_modules'), 'dir');

  const packs = join(scratch, 'packs');
  await mkdir(packs);
  await exec('npm', ['pack', '--pack-destination', packs], { cwd: clone, env: npmEnv(), maxBuffer: 16 * 1024 * 1024 });
  const tgz = (await readdir(packs)).filter((f) => f.endsWith('.tgz'));
  expect(tgz).toEqual([`recallscape-${version}.tgz`]);
  tarball = join(packs, tgz[0] ?? '');

  // As documented, plus a scratch prefix and the cache preference.
  await exec(
    'npm',
    ['install', '-g', '--prefix', prefix, '--prefer-offline', '--ignore-scripts', '--no-audit', '--no-fund', tarball],
    { cwd: scratch, env: npmEnv(), maxBuffer: 16 * 1024 * 1024 },
  );
}, 600_000);

afterAll(async () => {
  if (scratch !== undefined) await rm(scratch, { recursive: true, force: true });
});

describe('installing the command from a packed clone', () => {
  it('packs the compiled command and no sources or tests', async () => {
    const { stdout } = await exec('tar', ['-tzf', tarball]);
    const files = stdout.split('\n').filter((f) => f !== '');
    expect(files).toContain('package/dist/coordinator/cli.js');
    expect(files).toContain('package/dist/worker/thread-entry.js');
    expect(files).toContain('package/bin/recallscape.js');
    expect(files.filter((f) => f.endsWith('.ts') || f.startsWith('package/test/'))).toEqual([]);
  });

  it('installs a copy, not a link back into the clone', async () => {
    const where = join(prefix, 'lib', 'node_modules', 'recallscape');
    expect((await lstat(where)).isSymbolicLink()).toBe(false);
    expect((await lstat(join(where, 'dist', 'coordinator', 'cli.js'))).isFile()).toBe(true);
  });

  it('puts recallscape on the PATH, printing the package version from any folder', async () => {
    const elsewhere = await mkdtemp(join(scratch, 'elsewhere-'));
    const result = await installed(['--version'], elsewhere);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout.trim()).toBe(version);
  });

  it('runs a one-point sweep outside the clone, with the metrics the clone computes', async () => {
    const sweep = [
      'name: one-point',
      'seed: 5',
      'replicates: 1',
      'fixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4, patternOverlap: 0.5, overlapLength: 1 }',
      '',
    ].join('\n');
    const outside = await mkdtemp(join(scratch, 'sweep-'));
    await writeFile(join(outside, 'one.yaml'), sweep);
    const result = await installed(['run', 'one.yaml', '--threads', '1'], outside);
    expect(result.code, result.stderr).toBe(0);
    const records = await shardRecords(join(outside, 'results', 'one-point', 'results'));
    // One point and one replicate make one job (common practice, no source).
    expect(records).toHaveLength(1);
    expect(typeof records[0]?.['metrics']).toBe('object');

    // The same sweep through the clone's own CLI: a job's metrics depend only on the job, not the install.
    const reference = await mkdtemp(join(scratch, 'reference-'));
    await writeFile(join(reference, 'one.yaml'), sweep);
    const fromClone = await runCli(['run', 'one.yaml', '--threads', '1'], reference);
    expect(fromClone.code, fromClone.stderr).toBe(0);
    const expected = await shardRecords(join(reference, 'results', 'one-point', 'results'));
    expect(records[0]?.['key']).toBe(expected[0]?.['key']);
    expect(records[0]?.['metrics']).toEqual(expected[0]?.['metrics']);
  });
});
