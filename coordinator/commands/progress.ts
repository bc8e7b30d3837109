import { setTimeout as sleep } from 'node:timers/promises';
import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import { openWorkQueue } from '../../shared/queue/backends.js';
import type { WorkQueue } from '../../shared/queue/work-queue.js';
import { REDIS_URL_ENV } from '../../shared/redis-url.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { action } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { completedPercent } from '../completed-percent.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { plannedNow } from '../planned-jobs.js';
import { formatDuration } from '../progress-display.js';
import { type ProgressSnapshot, sweepProgress } from '../queue-progress.js';
import { addQueueOptions, optionalQueueSettings, type QueueCliOptions, queueFlags } from '../queue-session.js';
import { displayPath, shellWord } from '../shell-text.js';

interface ProgressOptions extends QueueCliOptions, ModelCliOptions {
  readonly follow?: boolean;
  readonly json?: boolean;
}

const FOLLOW_INTERVAL_MS = 2_000;

export function registerProgress(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'progress')
      .option('--follow', 'redraw a live progress bar every 2 s until the sweep is finished (Ctrl-C stops watching)')
      .option('--json', 'print the figures as one JSON object')
      .addOption(modelsOption()),
    false,
  ).action(
    action(async (dir: string, options: ProgressOptions) => {
      await useModelOptions(options);
      const settings = optionalQueueSettings(options);
      const store = ResultStore.open(dir);
      const sweep = await store.readSweep();
      const logger = createLogger({ name: 'progress' });
      const queue: WorkQueue | undefined = settings === undefined ? undefined : await openWorkQueue(settings, logger);
      // An adaptive sweep plans what its design asks for so far, not its starting grid.
      const snapshot = async (): Promise<ProgressSnapshot> =>
        sweepProgress(
          store,
          sweep,
          queue,
          sweep.spec.refine === undefined ? undefined : (await plannedNow(store, sweep)).count,
        );
      // The command that starts a stopped sweep again, with this command's queue options.
      const resume = (s: ProgressSnapshot): string =>
        [
          'recallscape',
          'requeue',
          displayPath(s.dir),
          ...queueFlags(options),
          ...(s.queue !== null && s.queue.failed > 0 ? ['--failed'] : []),
        ]
          .map(shellWord)
          .join(' ');
      try {
        if (options.follow === true) {
          await follow(snapshot, resume);
        } else {
          const s = await snapshot();
          process.stdout.write(
            options.json === true
              ? `${JSON.stringify({ ...s, ...(s.state === 'stopped' ? { resume: resume(s) } : {}) })}\n`
              : describe(s, resume(s)),
          );
        }
      } finally {
        await queue?.close();
      }
    }),
  );
}

export function describe(s: ProgressSnapshot, resume: string): string {
  const dir = shellWord(displayPath(s.dir));
  const lines = [`sweep     ${s.name} (hash ${s.hash.slice(0, 16)})`, `planned   ${s.planned}`];
  let finished = `finished  ${s.finished} (${completedPercent(s.finished, s.planned)})`;
  if (s.queue !== null && s.queue.finishedNotGathered > 0) {
    finished += `: ${s.onDisk} on disk, ${s.queue.finishedNotGathered} only in Redis (\`recallscape gather ${dir}\` copies them here)`;
  }
  lines.push(finished);
  if (s.queue !== null) {
    lines.push(
      `queue     waiting ${s.queue.waiting}, active ${s.queue.active}, delayed ${s.queue.delayed} (retry backoff), failed ${s.queue.failed}`,
    );
  } else {
    lines.push(`queue     (not asked: set ${REDIS_URL_ENV} or give --redis URL to see waiting and running jobs)`);
  }
  if (s.state === 'stopped') {
    // Nothing is moving: a rate and a time left would suggest otherwise.
    const missing = s.planned - s.finished;
    lines.push(`state     stopped: nothing is queued or running, and ${missing} job(s) have no result`);
    lines.push(`resume    ${resume}`);
  } else {
    const rate = s.perMinute === null ? 'unknown yet' : `${s.perMinute.toFixed(s.perMinute >= 100 ? 0 : 1)} jobs/min`;
    const eta = s.etaSeconds === null ? '?' : formatDuration(s.etaSeconds);
    lines.push(`rate      ${rate}, time left ~${eta}`);
  }
  const kinds = Object.entries(s.failuresByKind).map(([kind, n]) => `${kind} ${n}`);
  lines.push(
    kinds.length === 0
      ? 'failures  none recorded here'
      : `failures  ${kinds.join(', ')} attempts; ${s.failingJobs} job(s) still without a result${s.queue !== null && s.queue.failed > 0 && s.state !== 'stopped' ? ` (\`recallscape requeue ${dir} --failed\` retries them)` : ''}`,
  );
  if (s.warnings > 0) lines.push(`warnings  ${s.warnings} damaged or conflicting lines in the result files`);
  return `${lines.join('\n')}\n`;
}

/** One line for --follow when stdout is not a terminal (a log file, a pipe). */
export function followLine(s: ProgressSnapshot): string {
  const q = s.queue;
  const queue =
    q === null ? '' : ` | waiting ${q.waiting} | active ${q.active} | delayed ${q.delayed} | failed ${q.failed}`;
  if (s.state === 'stopped') {
    return `finished ${s.finished}/${s.planned} (${completedPercent(s.finished, s.planned)})${queue} | stopped: nothing queued or running`;
  }
  const rate = s.perMinute === null ? '?' : s.perMinute.toFixed(1);
  const eta = s.etaSeconds === null ? '?' : formatDuration(s.etaSeconds);
  return `finished ${s.finished}/${s.planned} (${completedPercent(s.finished, s.planned)})${queue} | ${rate} jobs/min | left ~${eta}`;
}

async function follow(
  snapshot: () => Promise<ProgressSnapshot>,
  resume: (s: ProgressSnapshot) => string,
): Promise<void> {
  let stop = false;
  const onSignal = (): void => {
    stop = true;
  };
  process.once('SIGINT', onSignal);
  // A live bar on a terminal; elsewhere one plain line per redraw (cli-progress loads only for the bar).
  const bar =
    process.stdout.isTTY === true
      ? new (await import('cli-progress')).default.SingleBar({
          format:
            'finished [{bar}] {percentage}% {value}/{total} | waiting {waiting} | active {active} | failed {failed} | {rate}/min | left ~{timeLeft}',
          barCompleteChar: '#',
          barIncompleteChar: '.',
          hideCursor: true,
          fps: 1,
        })
      : undefined;
  let last: ProgressSnapshot | undefined;
  try {
    for (let first = true; ; first = false) {
      const s = await snapshot();
      last = s;
      if (bar === undefined) {
        process.stdout.write(`${followLine(s)}\n`);
      } else {
        const payload = {
          waiting: s.queue?.waiting ?? '?',
          active: s.queue?.active ?? '?',
          failed: s.queue?.failed ?? s.failingJobs,
          rate: s.perMinute === null ? '?' : s.perMinute.toFixed(1),
          timeLeft: s.etaSeconds === null ? '?' : formatDuration(s.etaSeconds),
        };
        if (first) bar.start(s.planned, s.finished, payload);
        else bar.update(s.finished, payload);
      }
      // A stopped sweep will not move on by itself: watching it would never end.
      if (s.finished >= s.planned || s.state === 'stopped' || stop) break;
      for (let waited = 0; waited < FOLLOW_INTERVAL_MS && !stop; waited += 200) await sleep(200);
      if (stop) break;
    }
  } finally {
    bar?.stop();
    process.removeListener('SIGINT', onSignal);
  }
  if (last !== undefined) process.stdout.write(describe(last, resume(last)));
}
