import { InputError } from '../errors.js';
import type { Logger } from '../logger.js';
import { maskRedisUrl } from '../redis-url.js';
import { bullmqEntry } from './bullmq/bullmq-entry.js';
import type { BackendEntry, QueueBackend } from './queue-backend.js';
import type { QueueSettings } from './queue-settings.js';
import type { ConsumerOptions, JobHandler, WorkConsumer } from './work-consumer.js';
import type { WorkQueue } from './work-queue.js';

/**
 * Every queue backend, chosen by the URL's scheme. A new backend is one file
 * exporting its BackendEntry and one entry here; the first is the default
 * whose checks explain URLs that name no scheme at all.
 */
const BACKENDS: readonly BackendEntry[] = [bullmqEntry];

function schemeOf(url: string): string | undefined {
  return /^([a-z][a-z0-9+.-]*:)\/\//i.exec(url)?.[1]?.toLowerCase();
}

function entryFor(url: string): BackendEntry | undefined {
  const scheme = schemeOf(url);
  return scheme === undefined ? undefined : BACKENDS.find((b) => b.schemes.includes(scheme));
}

/** Check a queue URL before anything connects: InputError (exit 2) naming `--redis`; the printable URL. */
export function checkQueueUrl(url: string): { readonly masked: string } {
  const entry = entryFor(url);
  if (entry !== undefined) return entry.checkUrl(url);
  const scheme = schemeOf(url);
  const [first] = BACKENDS;
  // No scheme at all: the default backend's check says what a URL looks like.
  if (scheme === undefined || first === undefined) return (first as BackendEntry).checkUrl(url);
  const known = BACKENDS.flatMap((b) => b.schemes.map((s) => s.replace(/:$/, '')));
  const message = `unsupported scheme "${scheme.replace(/:$/, '')}"; use ${known.join(' or ')}`;
  throw new InputError(`--redis: ${message} (got ${maskRedisUrl(url)})`, [{ path: '--redis', message }]);
}

async function backendFor(settings: QueueSettings): Promise<QueueBackend> {
  const entry = entryFor(settings.url);
  // The URL was checked when the settings were made; reaching this is a bug.
  if (entry === undefined) throw new RangeError(`no queue backend for ${settings.masked}`);
  return entry.load();
}

/** The coordinator's view of the queue the settings name. */
export async function openWorkQueue(settings: QueueSettings, logger?: Logger): Promise<WorkQueue> {
  return (await backendFor(settings)).openQueue(settings, logger);
}

/** A worker's consumer of the queue the settings name. */
export async function openWorkConsumer(
  settings: QueueSettings,
  handler: JobHandler,
  options: ConsumerOptions,
): Promise<WorkConsumer> {
  return (await backendFor(settings)).openConsumer(settings, handler, options);
}
