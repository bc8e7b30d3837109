/** Tries per job: the first run plus three retries for transient faults (crashes, exceptions). */
export const JOB_ATTEMPTS = 4;
/** First retry after 5 s, then 10 s, 20 s: long enough for a restarted machine or Redis. */
export const RETRY_BASE_DELAY_MS = 5_000;
/** Failed jobs kept in the queue for `requeue --failed` and for reading their reasons; older ones drop off. */
export const KEEP_FAILED_JOBS = 10_000;
/**
 * Finished jobs stay until `gather` copies their records to disk and removes
 * them; after 30 days they go anyway so the queue's memory stays bounded even
 * if nobody gathers (the records are still in the worker's own shard files).
 */
export const KEEP_COMPLETED_SECONDS = 30 * 24 * 3600;
/**
 * Largest job payload (characters of its JSON) a worker reads. A real payload
 * is a few hundred bytes to a few kilobytes (explicit sequences included);
 * anything bigger is refused unread, so a hostile writer cannot make a worker
 * parse hundreds of megabytes.
 */
export const MAX_PAYLOAD_CHARS = 1 << 20;
