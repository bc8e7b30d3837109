import { spawn } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, sep } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CLI, type CliResult, runCli } from './cli-helpers.js';

/**
 * What a command loads decides how fast it starts (speed itself is measured
 * by `npm run bench -- startup`). These tests record every module the real
 * CLI loads, ES modules through a loader hook and CommonJS ones from
 * require.cache at exit, and check that common commands leave the heavy
 * libraries alone.
 */

const MARK = 'rs-loaded-modules=';
// Runs in Node's loader thread; hands each loaded URL to the main thread.
const HOOKS = `let port;
export function initialize(data) { port = data.port; }
export async function load(url, context, next) { port.postMessage(url); return next(url, context); }`;
const PRELOAD = `import { createRequire, register } from 'node:module';
import { MessageChannel, receiveMessageOnPort } from 'node:worker_threads';
const { port1, port2 } = new MessageChannel();
port1.unref();
register(${JSON.stringify(`data:text/javascript,${encodeURIComponent(HOOKS)}`)}, { data: { port: port2 }, transferList: [port2] });
const cache = createRequire(process.cwd() + '/x.js').cache;
process.on('exit', () => {
  const loaded = [];
  for (let m = receiveMessageOnPort(port1); m !== undefined; m = receiveMessageOnPort(port1)) loaded.push(m.message);
  loaded.push(...Object.keys(cache));
  process.stderr.write('\\n${MARK}' + JSON.stringify(loaded) + '\\n');
});`;

interface Loaded extends CliResult {
  readonly modules: readonly string[];
}

function runRecorded(args: readonly string[], cwd: string): Promise<Loaded> {
  return new Promise((done, fail) => {
    const child = spawn(
      process.execPath,
      ['--import', `data:text/javascript,${encodeURIComponent(PRELOAD)}`, CLI, ...args],
      {
        cwd,
        env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'info', RECALLSCAPE_DEBUG: '' },
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d: Buffer) => (stdout += d.toString()));
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', fail);
    child.on('close', (code, signal) => {
      const at = stderr.lastIndexOf(MARK);
      if (at < 0) {
        fail(new Error(`no module list in stderr:\n${stderr}`));
        return;
      }
      const modules = JSON.parse(stderr.slice(at + MARK.length).trim()) as string[];
      done({ code, signal, stdout, stderr: stderr.slice(0, at).trimEnd(), modules });
    });
  });
}

/** The npm packages among the loaded modules, by name. */
function packages(modules: readonly string[]): Set<string> {
  const names = new Set<string>();
  for (const m of modules) {
    const match = /node_modules[\\/]((?:@[^\\/]+[\\/])?[^\\/]+)/.exec(m);
    if (match?.[1] !== undefined) names.add(match[1].replace('\\', '/'));
  }
  return names;
}

const commandModules = (modules: readonly string[]) =>
  modules.filter(
    (m) => m.includes(`${sep}dist${sep}coordinator${sep}commands${sep}`) || m.includes('/dist/coordinator/commands/'),
  );

const QUEUE_LIBRARIES = ['bullmq', 'ioredis'];
const DRAWING_LIBRARIES = ['@resvg/resvg-js', 'd3-contour', 'd3-scale', 'd3-scale-chromatic'];
const TERMINAL_ONLY = ['cli-progress', 'pino-pretty'];

let dir: string;
let sweep: string;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-startup-'));
  sweep = join(dir, 'small.yaml');
  await writeFile(
    sweep,
    'name: small\nseed: 1\nreplicates: 2\nfixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4 }\nvary:\n  patternOverlap: { list: [0, 1] }\n',
  );
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('what the command loads to start', () => {
  it('prints the version and the command list without loading any command or library beyond the parser', async () => {
    for (const args of [['--version'], ['--help']]) {
      const result = await runRecorded(args, dir);
      expect(result.code, result.stderr).toBe(0);
      expect(commandModules(result.modules)).toEqual([]);
      expect([...packages(result.modules)]).toEqual(['commander']);
    }
  });

  it('plans and runs a sweep through a pipe without the queue, drawing or terminal libraries', async () => {
    const plan = await runRecorded(['plan', sweep, '--calibrate', '0'], dir);
    expect(plan.code, plan.stderr).toBe(0);
    // --no-report: the report at the end of a run loads the renderers then, which is not start-up.
    const run = await runRecorded(['run', sweep, '--out', join(dir, 'results'), '--threads', '1', '--no-report'], dir);
    expect(run.code, run.stderr).toBe(0);
    for (const result of [plan, run]) {
      const loaded = packages(result.modules);
      for (const name of [...QUEUE_LIBRARIES, ...DRAWING_LIBRARIES, ...TERMINAL_ONLY])
        expect(loaded.has(name), name).toBe(false);
      // Only the command asked for is loaded.
      expect(commandModules(result.modules)).toHaveLength(1);
    }
  });

  it('reports an unreachable Redis before loading the queue library', async () => {
    // A port on 127.0.0.1 with nothing listening: the connection is refused at once.
    const server = createServer();
    await new Promise<void>((ok) => server.listen(0, '127.0.0.1', ok));
    const address = server.address();
    await new Promise<void>((ok) => server.close(() => ok()));
    const port = typeof address === 'object' && address !== null ? address.port : 0;
    await runCli(['run', sweep, '--out', join(dir, 'queue'), '--threads', '1'], dir);
    const result = await runRecorded(
      ['requeue', join(dir, 'queue', 'small'), '--redis', `redis://127.0.0.1:${port}`, '--connect-timeout', '300'],
      dir,
    );
    expect(result.code).toBe(1);
    expect(result.stderr).toMatch(/cannot reach Redis at redis:\/\/127\.0\.0\.1:\d+ \(ECONNREFUSED\)/);
    expect(packages(result.modules).has('bullmq')).toBe(false);
  });
});

describe('the command list', () => {
  it('describes every command as the command itself does', async () => {
    const top = await runCli(['--help'], dir);
    expect(top.code, top.stderr).toBe(0);
    const listed = top.stdout.slice(top.stdout.indexOf('Commands:'));
    const entries = [...listed.matchAll(/^ {2}(\S+)((?: <\w+>| \[\w+\])*) {2,}([\s\S]*?)(?=^ {2}\S|(?![\s\S]))/gm)]
      .map((m) => ({ name: m[1] ?? '', args: (m[2] ?? '').trim(), text: (m[3] ?? '').replace(/\s+/g, ' ').trim() }))
      .filter((e) => e.name !== 'help');
    expect(entries.length).toBeGreaterThan(10);
    const helps = await Promise.all(entries.map((e) => runCli([e.name, '--help'], dir)));
    entries.forEach((entry, i) => {
      const help = helps[i];
      expect(help?.code, `${entry.name}: ${help?.stderr ?? ''}`).toBe(0);
      const [usage = '', , ...rest] = (help?.stdout ?? '').split('\n');
      // "Usage: recallscape plan [options] <file>": the same arguments as the list shows.
      const args = usage.replace(`Usage: recallscape ${entry.name}`, '').replace('[options]', '').trim();
      expect(args, entry.name).toBe(entry.args);
      const description = rest.join('\n').split('\n\n')[0]?.replace(/\s+/g, ' ').trim();
      expect(entry.text, entry.name).toBe(description);
    });
  });
});
