import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import { openWorkQueue } from '../../shared/queue/backends.js';
import { DEFAULT_QUEUE_NAME, DEFAULT_QUEUE_PREFIX } from '../../shared/queue/queue-target.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { action, EXIT_FAILURE, EXIT_OK, parseWholeNumber } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { completedPercent } from '../completed-percent.js';
import { describeMissing, type MissingJobs } from '../finish-missing.js';
import { buildClosingReport } from '../finish-report.js';
import { type FinishEvent, type FinishResult, finishSweep } from '../finish-sweep.js';
import { parseUntil } from '../finish-until.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { formatDuration } from '../progress-display.js';
import type { ProgressSnapshot } from '../queue-progress.js';
import { addQueueOptions, type QueueCliOptions, queueSettings } from '../queue-session.js';
import { displayPath, shellWord } from '../shell-text.js';
import { EXIT_INTERRUPTED } from './run.js';

/** Exit code when --until came before the end (as `timeout` from GNU coreutils exits). */
export const EXIT_UNTIL = 124;
/** How long Redis may stay away (restarting, a network cut) before the command gives up. */
export const REDIS_PATIENCE_MS = 5 * 60_000;
/** A progress line at most this often when nothing else happens (plain lines, suited to a log file). */
const LINE_EVERY_MS = 10_000;

interface FinishFlags extends QueueCliOptions, ModelCliOptions {
  readonly failed?: boolean;
  readonly until?: string;
  readonly interval: string;
  readonly report: boolean;
  readonly json?: boolean;
}

export function registerFinish(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'finish')
      .option('--failed', 'first give the jobs in the failed set a fresh set of attempts (as `requeue --failed`)')
      .option('--until <time>', 'stop following at this time: a span (45m, 2h), a clock time (18:30) or a date-time')
      .option('--interval <ms>', 'pause between two looks at the queue and the results', '2000')
      .option('--no-report', 'do not build the report at the end (`recallscape report DIR` builds it any time)')
      .option('--json', 'print the outcome as one JSON object on stdout (progress lines go to stderr)')
      .addOption(modelsOption()),
  ).action(
    action(async (dir: string, flags: FinishFlags) => {
      await useModelOptions(flags);
      // Every option is checked before Redis or the folder is touched: bad input exits with 2.
      const settings = queueSettings(flags);
      const intervalMs = parseWholeNumber('--interval', flags.interval, 200, 3_600_000);
      const deadline = flags.until === undefined ? undefined : parseUntil(flags.until, Date.now());
      const store = ResultStore.open(dir);
      const sweep = await store.readSweep();
      const logger = createLogger({ name: 'finish', level: process.env['RECALLSCAPE_LOG_LEVEL'] ?? 'warn' });
      const say = (line: string): void => {
        (flags.json === true ? process.stderr : process.stdout).write(`${line}\n`);
      };
      const resume = resumeCommand(dir, flags, settings.url === settings.masked ? settings.url : 'URL');

      const stop = new AbortController();
      const onSignal = (signal: NodeJS.Signals): void => {
        if (stop.signal.aborted) process.exit(EXIT_INTERRUPTED);
        process.stderr.write(
          `recallscape: ${signal}: stopping after this look (workers go on; send it again to stop at once)\n`,
        );
        stop.abort();
      };
      process.on('SIGINT', onSignal);
      process.on('SIGTERM', onSignal);

      say(
        `following sweep ${sweep.spec.name} in ${displayPath(store.dir)}/ through Redis at ${settings.masked} ` +
          `(queue ${settings.queue.name}), looking every ${formatDuration(intervalMs / 1000)}` +
          (deadline === undefined ? '' : ` until ${new Date(deadline).toISOString()}`),
      );
      const lines = progressLines(say, sweep.spec.refine !== undefined);
      let result: FinishResult;
      try {
        result = await finishSweep({
          store,
          sweep,
          openQueue: () => openWorkQueue(settings, logger),
          retryFailed: flags.failed === true,
          intervalMs,
          ...(deadline === undefined ? {} : { deadline }),
          redisPatienceMs: REDIS_PATIENCE_MS,
          signal: stop.signal,
          onEvent: lines.onEvent,
          logger,
        });
      } finally {
        process.off('SIGINT', onSignal);
        process.off('SIGTERM', onSignal);
      }
      lines.flush();

      const planned = result.snapshot?.planned ?? result.missing.total;
      const recorded = planned - result.missing.total;
      let reportDir: string | null = null;
      if (result.end === 'complete') {
        say(
          `every job of ${sweep.spec.name} has a record (${planned} of ${planned}); ` +
            `this command copied ${result.gathered} from Redis and queued ${result.queued} again`,
        );
        if (flags.report) {
          const { report } = await buildClosingReport(store.dir, (text) => say(text.trimEnd()));
          reportDir = report.reportDir;
        } else {
          say(`build a report with: recallscape report ${shellWord(displayPath(store.dir))}`);
        }
        process.exitCode = EXIT_OK;
      } else {
        for (const line of unfinishedLines(result, sweep.spec.name, store.dir, planned, resume)) say(line);
        process.exitCode =
          result.end === 'deadline' ? EXIT_UNTIL : result.end === 'stopped' ? EXIT_INTERRUPTED : EXIT_FAILURE;
      }
      if (flags.json === true) {
        const outcome = {
          name: sweep.spec.name,
          dir: store.dir,
          end: result.end,
          planned,
          recorded,
          missing: result.missing,
          gathered: result.gathered,
          queued: result.queued,
          retried: result.retried,
          report: reportDir,
          resume: result.end === 'complete' ? null : resume,
        };
        process.stdout.write(`${JSON.stringify(outcome)}\n`);
      }
    }),
  );
}

/** What is missing and what to do, for every end but `complete`. */
function unfinishedLines(result: FinishResult, name: string, dir: string, planned: number, resume: string): string[] {
  const m: MissingJobs = result.missing;
  const shown = displayPath(dir);
  const lines: string[] = [];
  switch (result.end) {
    case 'stuck':
      lines.push(
        `sweep ${name} cannot finish: ${m.total} of ${planned} jobs have no record and none is queued or running.`,
      );
      break;
    case 'deadline':
      lines.push(`stopped following at the time --until gave; the workers go on.`);
      break;
    case 'stopped':
      lines.push('stopped following on request; the workers go on.');
      break;
    case 'unreachable':
      lines.push(
        `gave up after Redis stayed unreachable for ${formatDuration(REDIS_PATIENCE_MS / 1000)}: ${result.redisMessage ?? 'no answer'}`,
      );
      break;
    case 'complete':
      break;
  }
  lines.push(`missing: ${describeMissing(m)}`);
  if (m.failed > 0) {
    const kinds = Object.entries(result.snapshot?.failuresByKind ?? {}).map(([kind, n]) => `${kind} ${n}`);
    lines.push(
      `failed jobs: their errors are in ${shown}/failures/ when workers share this disk` +
        (kinds.length > 0 ? ` (attempts recorded here: ${kinds.join(', ')})` : '') +
        ', else in the failures/ folder of the worker that ran them',
    );
  }
  if (result.rejected > 0) {
    lines.push(
      `${result.rejected} finished job(s) in Redis returned something that is no record of this sweep; they are left there`,
    );
  }
  if (result.end === 'stuck' && m.failed > 0) {
    lines.push(`give the failed jobs fresh attempts and follow again: ${resume} --failed`);
  } else {
    lines.push(`follow again with: ${resume}`);
  }
  lines.push(`a report of what is there: recallscape report ${shellWord(shown)}`);
  return lines;
}

/**
 * The command that picks up where this one stopped. A Redis URL given on the
 * command line is repeated only when it holds no secret; otherwise it reads
 * `--redis URL`.
 */
function resumeCommand(dir: string, flags: FinishFlags, redisWord: string): string {
  const words = ['recallscape', 'finish', displayPath(dir)];
  if (flags.redis !== undefined) words.push('--redis', redisWord);
  if (flags.queue !== DEFAULT_QUEUE_NAME) words.push('--queue', flags.queue);
  if (flags.prefix !== DEFAULT_QUEUE_PREFIX) words.push('--prefix', flags.prefix);
  if (flags.models !== undefined) words.push('--models', flags.models);
  if (!flags.report) words.push('--no-report');
  return words.map(shellWord).join(' ');
}

/** Progress as plain lines: events at once, figures when they changed, at most every LINE_EVERY_MS. */
function progressLines(
  say: (line: string) => void,
  adaptive: boolean,
): { onEvent: (e: FinishEvent) => void; flush: () => void } {
  let lastLine = '';
  let lastAt = 0;
  let pending: ProgressSnapshot | null = null;
  let gathered = 0;
  const print = (s: ProgressSnapshot): void => {
    const line = figures(s);
    if (line === lastLine) return;
    say(gathered > 0 ? `${line} | copied from Redis ${gathered}` : line);
    lastLine = line;
    lastAt = Date.now();
    pending = null;
  };
  return {
    onEvent(e) {
      switch (e.kind) {
        case 'progress':
          pending = e.snapshot;
          if (Date.now() - lastAt >= LINE_EVERY_MS || e.snapshot.onDisk >= e.snapshot.planned) print(e.snapshot);
          break;
        case 'gathered':
          gathered += e.copied;
          break;
        case 'queued':
          if (e.retried > 0) say(`gave ${e.retried} failed job(s) a fresh set of attempts`);
          if (e.queued > 0 && adaptive) {
            // New trials of the design and trials Redis lost look the same from here: neither is recorded nor queued.
            say(`queued ${e.queued} trial(s) of the adaptive design that had no record and were not in the queue`);
          } else if (e.queued > 0) {
            say(
              e.first
                ? `queued ${e.queued} job(s) that had no record and were not in the queue`
                : `${e.queued} job(s) were neither recorded nor in the queue (lost from Redis): queued them again`,
            );
          }
          break;
        case 'redis-trouble':
          say(`Redis trouble: ${e.message}; trying again`);
          break;
        case 'redis-back':
          say('Redis answers again');
          break;
      }
    },
    flush() {
      if (pending !== null) print(pending);
    },
  };
}

function figures(s: ProgressSnapshot): string {
  const q = s.queue;
  const queue =
    q === null
      ? ''
      : ` | waiting ${q.waiting} | running ${q.active} | retrying ${q.delayed} | failed ${q.failed}` +
        (q.finishedNotGathered > 0 ? ` | only in Redis ${q.finishedNotGathered}` : '');
  const rate = s.perMinute === null ? '?' : s.perMinute.toFixed(s.perMinute >= 100 ? 0 : 1);
  const eta = s.etaSeconds === null ? '?' : formatDuration(s.etaSeconds);
  return `recorded ${s.onDisk}/${s.planned} (${completedPercent(s.onDisk, s.planned)})${queue} | ${rate} jobs/min | left ~${eta}`;
}
