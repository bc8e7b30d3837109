import { randomBytes } from 'node:crypto';
import { hostname } from 'node:os';

/** What a writer id (and so a shard file name) may contain. */
export const WRITER_ID_PATTERN = /^[a-z0-9][a-z0-9._-]*$/;

function sanitise(text: string): string {
  const cleaned = text
    .toLowerCase()
    .replace(/[^a-z0-9._-]+/g, '-')
    .replace(/\.{2,}/g, '.')
    .replace(/^[^a-z0-9]+/, '')
    .slice(0, 60);
  return cleaned === '' ? 'host' : cleaned;
}

/**
 * A writer id unique to this process: `<host or prefix>-<pid>-<6 random>`.
 * Each process writes its own shard files under this name, so no two
 * processes ever append to one file and a shard is never reopened later.
 */
export function newWriterId(prefix?: string): string {
  const random = randomBytes(8).readBigUInt64BE().toString(36).padStart(6, '0').slice(-6);
  return `${sanitise(prefix ?? hostname())}-${process.pid}-${random}`;
}

/** Whether `id` is safe as a shard file name. */
export function isWriterId(id: string): boolean {
  return id.length <= 200 && WRITER_ID_PATTERN.test(id) && !id.includes('..');
}
