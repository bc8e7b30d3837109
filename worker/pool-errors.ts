/**
 * Why a thread pool did not run a job. Raised on the main thread only, so
 * `isErrorOf` (shared/errors.ts) matches them by class, subclasses included.
 */
export class PoolUnavailable extends Error {
  static readonly errorName: string = 'PoolUnavailable';
  override readonly name: string = PoolUnavailable.errorName;
}

/** The pool's threads cannot start (a broken or missing build): nothing will run here. */
export class PoolBroken extends PoolUnavailable {
  static override readonly errorName = 'PoolBroken';
  override readonly name: string = PoolBroken.errorName;
}

/** The pool was closed: it finishes what it has and takes nothing new. */
export class PoolClosed extends PoolUnavailable {
  static override readonly errorName = 'PoolClosed';
  override readonly name: string = PoolClosed.errorName;
}

/** The pool was terminated: running and queued jobs were abandoned. */
export class PoolTerminated extends PoolUnavailable {
  static override readonly errorName = 'PoolTerminated';
  override readonly name: string = PoolTerminated.errorName;
}
