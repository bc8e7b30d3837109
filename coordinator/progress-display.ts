import { createRequire } from 'node:module';
import type CliProgress from 'cli-progress';
import type { RunProgress } from './run-sweep.js';

/** Shows a sweep run's progress to a person: a live bar on a terminal, plain lines elsewhere. */
export interface ProgressDisplay {
  update(progress: RunProgress): void;
  /** Final state; prints the last line (plain mode) or freezes the bar. */
  stop(progress: RunProgress | undefined): void;
}

export interface ProgressDisplayOptions {
  readonly stream?: NodeJS.WritableStream & { isTTY?: boolean };
  /** Seconds between plain lines when the stream is not a terminal. */
  readonly intervalSeconds?: number;
  /** Force one mode (tests); default: bar on a TTY, lines otherwise. */
  readonly mode?: 'bar' | 'lines';
  readonly now?: () => number;
}

/** "1h 02m", "4m 05s", "12s": short and unambiguous. */
export function formatDuration(seconds: number): string {
  if (!Number.isFinite(seconds) || seconds < 0) return '?';
  const s = Math.round(seconds);
  if (s < 60) return `${s}s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m}m ${String(s % 60).padStart(2, '0')}s`;
  const h = Math.floor(m / 60);
  return `${h}h ${String(m % 60).padStart(2, '0')}m`;
}

/** Jobs per second with sensible precision for both fast and slow jobs. */
export function formatRate(rate: number): string {
  if (!Number.isFinite(rate) || rate <= 0) return '0';
  if (rate >= 100) return rate.toFixed(0);
  if (rate >= 1) return rate.toFixed(1);
  return rate.toPrecision(2);
}

interface Figures {
  readonly finished: number;
  readonly toRun: number;
  readonly rate: number;
  readonly eta: string;
}

function figures(progress: RunProgress, elapsedSeconds: number): Figures {
  const finished = progress.succeeded + progress.failed;
  const rate = elapsedSeconds > 0 ? finished / elapsedSeconds : 0;
  const left = Math.max(0, progress.toRun - finished);
  const eta = left === 0 ? '0s' : rate > 0 ? formatDuration(left / rate) : '?';
  return { finished, toRun: progress.toRun, rate, eta };
}

/** One plain progress line, as printed when stdout is not a terminal. */
export function progressLine(progress: RunProgress, elapsedSeconds: number): string {
  const f = figures(progress, elapsedSeconds);
  const percent = f.toRun === 0 ? 100 : Math.floor((100 * f.finished) / f.toRun);
  return (
    `progress: ${f.finished}/${f.toRun} jobs (${percent}%), ${formatRate(f.rate)} jobs/s, ` +
    `elapsed ${formatDuration(elapsedSeconds)}, left ~${f.eta}, errors ${progress.failed}`
  );
}

export function createProgressDisplay(options: ProgressDisplayOptions = {}): ProgressDisplay {
  const stream = options.stream ?? process.stdout;
  const now = options.now ?? (() => performance.now() / 1000);
  const mode = options.mode ?? (stream.isTTY === true ? 'bar' : 'lines');
  const started = now();
  return mode === 'bar'
    ? barDisplay(stream, started, now)
    : lineDisplay(stream, started, now, options.intervalSeconds ?? 5);
}

function lineDisplay(
  stream: NodeJS.WritableStream,
  started: number,
  now: () => number,
  interval: number,
): ProgressDisplay {
  let lastPrinted = started;
  let latest: RunProgress | undefined;
  return {
    update(progress) {
      latest = progress;
      const t = now();
      if (t - lastPrinted >= interval) {
        lastPrinted = t;
        stream.write(`${progressLine(progress, t - started)}\n`);
      }
    },
    stop(progress) {
      const last = progress ?? latest;
      if (last !== undefined) stream.write(`${progressLine(last, now() - started)}\n`);
    },
  };
}

// cli-progress is loaded only when a bar is drawn: `plan` and piped runs never need it.
const requireCjs = createRequire(import.meta.url);

function barDisplay(stream: NodeJS.WritableStream, started: number, now: () => number): ProgressDisplay {
  const cliProgress = requireCjs('cli-progress') as typeof CliProgress;
  const bar = new cliProgress.SingleBar({
    stream,
    format: 'jobs [{bar}] {percentage}% {value}/{total} | {rate} jobs/s | left ~{left} | errors {failed}',
    barCompleteChar: '#',
    barIncompleteChar: '.',
    hideCursor: true,
    fps: 5,
    // cli-progress draws only on a TTY unless told otherwise; the caller chose bar mode.
    noTTYOutput: true,
  });
  let begun = false;
  const payload = (p: RunProgress) => {
    const f = figures(p, now() - started);
    return { rate: formatRate(f.rate), left: f.eta, failed: p.failed };
  };
  const show = (p: RunProgress) => {
    const f = figures(p, now() - started);
    if (!begun) {
      begun = true;
      bar.start(Math.max(f.toRun, 0), f.finished, payload(p));
    } else {
      bar.setTotal(Math.max(f.toRun, 0));
      bar.update(f.finished, payload(p));
    }
  };
  return {
    update: show,
    stop(progress) {
      if (progress !== undefined) show(progress);
      if (begun) bar.stop();
    },
  };
}
