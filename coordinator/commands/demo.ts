import type { Command } from 'commander';
import { defaultThreadCount } from '../../worker/thread-pool.js';
import { action } from '../cli-support.js';
import { buildReport } from '../summarize/build-report.js';
import { demoSweep } from '../demo-sweep.js';
import { parseWholeNumber } from '../plan-sweep.js';
import { MAX_THREADS, displayPath, executeSweep, shellWord } from './run.js';

interface DemoFlags {
  readonly out: string;
  readonly threads?: string;
}

/** The demo ends with the report page of the finished sweep; returns its path. */
async function buildDemoReport(dir: string): Promise<string | null> {
  const report = await buildReport({ dir });
  return report.indexHtml;
}

export function registerDemo(program: Command): void {
  program
    .command('demo')
    .description('Run the built-in demo sweep (recall of two overlapping sequences) on this machine, a couple of minutes on 2 cores')
    .option('--out <dir>', 'results root; the demo goes to <dir>/demo-overlap', 'results')
    .option('--threads <n>', 'worker threads (default: one per core)')
    .action(
      action(async (flags: DemoFlags) => {
        const threads = flags.threads === undefined ? defaultThreadCount() : parseWholeNumber('--threads', flags.threads, 1, MAX_THREADS);
        const sweep = demoSweep();
        const words = ['recallscape', 'demo', '--out', flags.out];
        if (flags.threads !== undefined) words.push('--threads', String(threads));
        const result = await executeSweep({
          sweep,
          root: flags.out,
          threads,
          resumeCommand: words.map(shellWord).join(' '),
          loggerName: 'demo',
        });
        if (result.stopped !== null) return;
        const dir = displayPath(result.dir);
        process.stdout.write(`demo results: ${dir}/ (sweep.json, results/, failures/)\n`);
        const report = await buildDemoReport(result.dir);
        process.stdout.write(
          report === null
            ? `summary: run \`recallscape report ${shellWord(dir)}\` to write tables and phase diagrams to ${dir}/report/\n`
            : `summary: ${displayPath(report)}\n`,
        );
      }),
    );
}
