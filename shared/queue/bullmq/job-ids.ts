import type { QueueTarget } from '../queue-target.js';

/** Number of sweep-hash hex digits in a job id: 64 bits keep sweeps apart in one queue. */
export const JOB_ID_HASH_DIGITS = 16;

/**
 * BullMQ job id of a planned job: `<first 16 hex of sweep hash>-<job key>`.
 * The dash makes it non-numeric (BullMQ treats integer-looking ids as its own
 * counter values) and it contains no ':' (a key separator).
 */
export function jobIdFor(sweepHash: string, key: string): string {
  return `${jobIdPrefix(sweepHash)}${key}`;
}

/** Every job id of a sweep starts with this. */
export function jobIdPrefix(sweepHash: string): string {
  if (!/^[0-9a-f]{16,}$/.test(sweepHash)) throw new RangeError(`not a sweep hash: "${sweepHash}"`);
  return `${sweepHash.slice(0, JOB_ID_HASH_DIGITS)}-`;
}

const JOB_ID_PATTERN = /^([0-9a-f]{16})-([0-9a-f]{32})$/;

/** The job key inside a job id of ours, or undefined for any other id. */
export function keyOfJobId(id: string): string | undefined {
  return JOB_ID_PATTERN.exec(id)?.[2];
}

/** Redis key of a job's hash, as BullMQ lays it out (`<prefix>:<queue>:<id>`). */
export function jobRedisKey(target: QueueTarget, id: string): string {
  return `${target.prefix}:${target.name}:${id}`;
}

/** Redis key of one of BullMQ's state sets (`completed`, `failed`, ...). */
export function stateRedisKey(target: QueueTarget, state: string): string {
  return `${target.prefix}:${target.name}:${state}`;
}

/**
 * BullMQ job name of a job of ours: `<sweep name>#<trials>`. The trial count
 * rides in the name so that counts per trial read one short field per job
 * instead of unpacking payloads. A name without it (a job of an earlier
 * version) is one trial.
 */
export function jobName(sweepName: string, trials: number): string {
  return `${sweepName}#${trials}`;
}

/** Trials of a job from its stored name; 1 for a name without a count (or a job that vanished meanwhile). */
export function trialsOfJobName(name: unknown): number {
  if (typeof name !== 'string') return 1;
  const match = /#(\d{1,7})$/.exec(name);
  return match === null ? 1 : Math.max(1, Number(match[1]));
}

/** Redis key holding the trials per job agreed for one sweep (never a job id: those hold no ':'). */
export function batchSizeRedisKey(target: QueueTarget, sweepHash: string): string {
  return `${target.prefix}:${target.name}:rs-batch:${jobIdPrefix(sweepHash).slice(0, -1)}`;
}
