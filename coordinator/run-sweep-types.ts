import type { Logger } from '../shared/logger.js';
import type { ShardFs } from '../shared/store/result-store.js';
import type { PlannedJob } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';

/* What an embedded run takes and reports, apart from the runner itself, so the runner and its caller share them without importing each other. */
/** What a progress display needs, sent after every finished job and once a second. */
export interface RunProgress {
  /** Jobs in the whole sweep. */
  readonly planned: number;
  /** Jobs that had a result before this run started (known so far). */
  readonly alreadyDone: number;
  /** Jobs this run means to execute (planned minus already done). */
  readonly toRun: number;
  readonly succeeded: number;
  readonly failed: number;
  readonly running: number;
}

export interface RunStart {
  readonly dir: string;
  readonly planned: number;
  /** Distinct jobs with a result in the folder before this run. */
  readonly withResults: number;
  readonly threads: number;
  readonly writer: string;
  readonly run: string;
}

export interface RunSweepOptions {
  readonly sweep: LoadedSweep;
  /** Results root; the sweep's folder is `<root>/<name>`. */
  readonly root: string;
  readonly threads: number;
  /** Graceful stop: no new jobs; running jobs finish and are written. */
  readonly signal?: AbortSignal;
  /** Hard stop: running jobs are abandoned at once (nothing half-written). */
  readonly abandonSignal?: AbortSignal;
  readonly onProgress?: (progress: RunProgress) => void;
  /** Called once the folder is ready and finished jobs are known, before any job starts. */
  readonly onStart?: (info: RunStart) => void;
  readonly logger: Logger;
  /** Thread script, for callers running from sources (tests); default: the compiled one. */
  readonly threadEntry?: URL;
  /** File calls of the shard writer (tests inject a failing disk); default: node:fs. */
  readonly shardFs?: ShardFs;
  /** Jobs to consider instead of the sweep's full expansion (one pass of an adaptive sweep). */
  readonly jobs?: { readonly count: number; readonly list: Iterable<PlannedJob> };
}

export interface RunSweepResult {
  readonly dir: string;
  readonly writer: string;
  readonly run: string;
  readonly planned: number;
  readonly alreadyDone: number;
  /** Jobs executed by this run (succeeded + failed). */
  readonly ran: number;
  readonly succeeded: number;
  readonly failed: number;
  /** Planned jobs that still have no result. */
  readonly missing: number;
  /** Why the run ended early, if it did. */
  readonly stopped: 'graceful' | 'abandoned' | null;
  readonly failuresDir: string;
  readonly resultsDir: string;
}

/**
 * Run every job of a sweep that has no result yet on a local thread pool,
 * appending results and failures to this process's own shard files. Safe to
 * kill at any moment: a later call with the same sweep runs only what is
 * still missing.
 */
