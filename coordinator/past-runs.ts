import type { Logger } from '../shared/logger.js';
import type { ResultStore, StoreWarning } from '../shared/store/result-store.js';

/** What earlier runs left in a sweep folder. */
export interface PastRuns {
  /** Keys of jobs with a result. */
  readonly done: ReadonlySet<string>;
  /** Highest failed attempt per job still without a result: attempt numbers continue from there. */
  readonly attempts: ReadonlyMap<string, number>;
}

/** Read a folder's results and failures once, warning about damaged lines. */
export async function readPastRuns(store: ResultStore, logger: Logger): Promise<PastRuns> {
  const onWarning = (w: StoreWarning): void => {
    logger.warn({ file: w.file, line: w.line, kind: w.kind }, w.message);
  };
  const done = await store.completedKeys({ onWarning });
  const attempts = new Map<string, number>();
  for await (const failure of store.failures({ onWarning })) {
    if (!done.has(failure.key)) attempts.set(failure.key, Math.max(attempts.get(failure.key) ?? 0, failure.attempt));
  }
  return { done, attempts };
}
