import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import type { LoadedSweep } from '../../shared/sweep/load.js';
import { defaultThreadCount, MAX_THREADS } from '../../worker/thread-pool.js';
import { action, EXIT_FAILURE, EXIT_OK, parseWholeNumber, printError } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, modelTimeoutOption, useModelOptions } from '../model-options.js';
import { DEFAULT_JOB_LIMIT, loadSweepForCommand } from '../plan-sweep.js';
import { createProgressDisplay } from '../progress-display.js';
import { runAdaptiveSweep } from '../run-adaptive.js';
import { type RunSweepResult, runSweep } from '../run-sweep.js';
import { displayPath, shellWord } from '../shell-text.js';
import { stopOnSignals } from '../stop-signals.js';

/** Exit code of a run stopped by SIGINT/SIGTERM (128 + SIGINT, as shells do). */
export const EXIT_INTERRUPTED = 130;

export { displayPath, shellWord } from '../shell-text.js';

export interface ExecuteOptions {
  readonly sweep: LoadedSweep;
  readonly root: string;
  readonly threads: number;
  /** The command that resumes this run, for the closing lines. */
  readonly resumeCommand: string;
  readonly loggerName: string;
  /** Build the report when the run ends (not when stopped by a signal); otherwise end with the hint to build it. */
  readonly report: boolean;
  /** Print the summary as one JSON object on stdout; the lines for a person go to stderr. */
  readonly json?: boolean;
}

/**
 * Run a loaded sweep with a progress display and signal handling, print the
 * closing summary, build the report (unless stopped or told not to), and set
 * the exit code: 0 all done, 1 some jobs failed, 130 stopped by a signal.
 * Used by `run` and `demo`.
 */
export async function executeSweep(options: ExecuteOptions): Promise<RunSweepResult> {
  const logger = createLogger({ name: options.loggerName });
  // With --json, stdout carries only the summary object: a script reads it whole.
  const out = options.json === true ? process.stderr : process.stdout;
  const display = createProgressDisplay({ stream: out });
  const signals = stopOnSignals(printError);
  let result: RunSweepResult;
  try {
    // An adaptive sweep (refine) runs pass after pass until its design is complete.
    const execute = options.sweep.spec.refine === undefined ? runSweep : runAdaptiveSweep;
    result = await execute({
      sweep: options.sweep,
      root: options.root,
      threads: options.threads,
      signal: signals.graceful,
      abandonSignal: signals.abandon,
      onProgress: (p) => display.update(p),
      onStart: (info) => {
        const left = info.planned - info.withResults;
        out.write(
          `sweep ${options.sweep.spec.name}: ${info.planned} jobs, ${info.withResults} with results already; ` +
            `running ${left} on ${info.threads} thread${info.threads === 1 ? '' : 's'} into ${displayPath(info.dir)}/\n`,
        );
      },
      logger,
    });
  } finally {
    display.stop(undefined);
    signals.dispose();
  }
  const dir = displayPath(result.dir);
  const lines: string[] = [];
  lines.push('');
  lines.push(
    `sweep ${options.sweep.spec.name}: ${result.planned} jobs planned, ${result.alreadyDone} had results before this run, ` +
      `${result.ran} ran now (${result.failed} with errors)`,
  );
  lines.push(`results: ${displayPath(result.resultsDir)}/`);
  if (result.stopped !== null) {
    lines.push(
      `stopped by a signal (${result.stopped === 'graceful' ? 'running jobs finished and were written' : 'running jobs were abandoned'}); ` +
        `${result.missing} jobs still have no result.`,
    );
    lines.push(`resume with: ${options.resumeCommand}`);
    process.exitCode = EXIT_INTERRUPTED;
  } else if (result.failed > 0) {
    lines.push(`${result.failed} jobs had errors; the errors are in ${displayPath(result.failuresDir)}/`);
    lines.push(`jobs with errors run again when you repeat the command: ${options.resumeCommand}`);
    process.exitCode = EXIT_FAILURE;
  } else {
    lines.push(
      options.report
        ? 'every job has a result.'
        : `every job has a result. build a report with: recallscape report ${shellWord(dir)}`,
    );
    process.exitCode = EXIT_OK;
  }
  out.write(`${lines.join('\n')}\n`);
  // Failed jobs do not hold the report back: it marks their cells as incomplete.
  let reportDir: string | null = null;
  if (options.report && result.stopped === null) {
    // Loaded here: the renderers take a while to load, and a run should start at once.
    const { buildClosingReport } = await import('../finish-report.js');
    const { report } = await buildClosingReport(result.dir, (text) => out.write(text));
    reportDir = report.reportDir;
  }
  if (options.json === true) {
    const { writer: _writer, run: _run, ...figures } = result;
    const summary = {
      name: options.sweep.spec.name,
      ...figures,
      resume: result.missing > 0 ? options.resumeCommand : null,
      reportDir,
    };
    process.stdout.write(`${JSON.stringify(summary)}\n`);
  }
  return result;
}

interface RunFlags extends ModelCliOptions {
  readonly out: string;
  readonly threads?: string;
  readonly maxJobs: string;
  readonly yes?: boolean;
  /** False with --no-report. */
  readonly report: boolean;
  readonly json?: boolean;
}

export function registerRun(program: Command): void {
  defineCommand(program, 'run')
    .option('--out <dir>', 'results root; results go to <dir>/<sweep name>', 'results')
    .option('--threads <n>', 'worker threads (default: one per core)')
    .option('--max-jobs <n>', 'refuse a sweep with more jobs than this', String(DEFAULT_JOB_LIMIT))
    .option('--yes', 'run even when the sweep has more jobs than the limit')
    .option('--no-report', 'do not build the report at the end (`recallscape report DIR` builds it any time)')
    .option('--json', 'print the closing summary as one JSON object on stdout (progress and messages go to stderr)')
    .addOption(modelsOption())
    .addOption(modelTimeoutOption('pool'))
    .action(
      action(async (file: string, flags: RunFlags) => {
        await useModelOptions(flags);
        const threads =
          flags.threads === undefined
            ? defaultThreadCount()
            : parseWholeNumber('--threads', flags.threads, 1, MAX_THREADS);
        const maxJobs = parseWholeNumber('--max-jobs', flags.maxJobs, 1);
        // Everything is validated before runSweep creates the results folder.
        const sweep = await loadSweepForCommand(file, { maxJobs, yes: flags.yes === true });
        const words = ['recallscape', 'run', file, '--out', flags.out];
        if (flags.threads !== undefined) words.push('--threads', String(threads));
        if (flags.models !== undefined) words.push('--models', flags.models);
        if (flags.modelTimeout !== undefined) words.push('--model-timeout', flags.modelTimeout);
        if (flags.yes === true) words.push('--yes');
        else if (flags.maxJobs !== String(DEFAULT_JOB_LIMIT)) words.push('--max-jobs', String(maxJobs));
        if (!flags.report) words.push('--no-report');
        await executeSweep({
          sweep,
          root: flags.out,
          threads,
          resumeCommand: words.map(shellWord).join(' '),
          loggerName: 'run',
          report: flags.report,
          json: flags.json === true,
        });
      }),
    );
}
