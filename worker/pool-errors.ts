/**
 * Why a thread pool did not run a job. Thrown on the main thread only (never
 * through a structured clone), so callers match them with `instanceof`.
 */
export class PoolUnavailable extends Error {
  override readonly name: string = 'PoolUnavailable';
}

/** The pool's threads cannot start (a broken or missing build): nothing will run here. */
export class PoolBroken extends PoolUnavailable {
  override readonly name = 'PoolBroken';
}

/** The pool was closed: it finishes what it has and takes nothing new. */
export class PoolClosed extends PoolUnavailable {
  override readonly name = 'PoolClosed';
}

/** The pool was terminated: running and queued jobs were abandoned. */
export class PoolTerminated extends PoolUnavailable {
  override readonly name = 'PoolTerminated';
}
