import type { Command } from 'commander';
import { defaultThreadCount, MAX_THREADS } from '../../worker/thread-pool.js';
import { action, parseWholeNumber } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { demoSweep } from '../demo-sweep.js';
import { executeSweep, shellWord } from './run.js';

interface DemoFlags {
  readonly out: string;
  readonly threads?: string;
  readonly replicates?: string;
}

export function registerDemo(program: Command): void {
  defineCommand(program, 'demo')
    .option('--out <dir>', 'results root; the demo goes to <dir>/demo-overlap', 'results')
    .option('--threads <n>', 'worker threads (default: one per core)')
    .option('--replicates <n>', 'trials per point for a quicker look (default 64; results go to demo-overlap-<n>x)')
    .action(
      action(async (flags: DemoFlags) => {
        const threads =
          flags.threads === undefined
            ? defaultThreadCount()
            : parseWholeNumber('--threads', flags.threads, 1, MAX_THREADS);
        const replicates =
          flags.replicates === undefined ? undefined : parseWholeNumber('--replicates', flags.replicates, 1, 10_000);
        const sweep = demoSweep(replicates);
        const words = ['recallscape', 'demo', '--out', flags.out];
        if (flags.threads !== undefined) words.push('--threads', String(threads));
        if (replicates !== undefined) words.push('--replicates', String(replicates));
        // The demo ends with the report of the finished sweep, as `run` does.
        await executeSweep({
          sweep,
          root: flags.out,
          threads,
          resumeCommand: words.map(shellWord).join(' '),
          loggerName: 'demo',
          report: true,
        });
      }),
    );
}
