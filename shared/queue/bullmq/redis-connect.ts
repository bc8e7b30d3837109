import { setTimeout as sleep } from 'node:timers/promises';
import { Redis, type RedisOptions } from 'ioredis';
import { isErrorOf, isInputError, ServiceError } from '../../errors.js';
import type { Logger } from '../../logger.js';
import { parseRedisUrl, type RedisTarget, redisOptionsFor } from '../../redis-url.js';

export interface ConnectOptions {
  /** Raw URL (`--redis` or the environment); parsed and checked here. */
  readonly url: string;
  /** Total time allowed for reaching Redis, retries included. */
  readonly connectTimeoutMs: number;
  /**
   * A worker keeps reconnecting forever (Redis may restart under it) and
   * BullMQ's blocking connection needs `maxRetriesPerRequest: null`; a
   * one-shot command gives up after a few retries instead of hanging.
   */
  readonly longLived: boolean;
  readonly connectionName?: string;
  readonly logger?: Logger;
}

export interface RedisConnection {
  readonly client: Redis;
  readonly target: RedisTarget;
}

/** Errors after which trying again cannot help. */
type Verdict = { readonly retry: boolean; readonly message: string };

/** Turn what ioredis reported into a one-line reason, with the URL masked. */
export function explainRedisError(error: unknown, target: RedisTarget): Verdict {
  const err = error as { code?: unknown; message?: unknown } | null;
  const code = typeof err?.code === 'string' ? err.code : undefined;
  const text = typeof err?.message === 'string' ? err.message : String(error);
  const where = target.masked;
  if (/^WRONGPASS/.test(text) || /invalid password/i.test(text)) {
    return {
      retry: false,
      message: `Redis refused the password for ${where}; check the user name and password in the URL`,
    };
  }
  if (/^NOAUTH/.test(text)) {
    return {
      retry: false,
      message: `Redis at ${where} requires a password; give it in the URL (redis://:PASSWORD@host:port)`,
    };
  }
  if (/^NOPERM/.test(text)) {
    return {
      retry: false,
      message: `Redis at ${where} denied a command to this user (${text.split('\n')[0] ?? text}); the ACL must allow the queue commands`,
    };
  }
  if (code !== undefined && /^(ERR_SSL|ERR_TLS|CERT_|UNABLE_TO_|DEPTH_ZERO|SELF_SIGNED)/.test(code)) {
    return {
      retry: false,
      message: `TLS with Redis at ${where} failed (${code}); check the certificate or use redis:// if the server has no TLS`,
    };
  }
  if (/Unknown RESP type|Protocol error/i.test(text)) {
    return { retry: false, message: `the server at ${where} does not answer like Redis; is the port right?` };
  }
  const reason = code ?? (/timed? ?out/i.test(text) ? 'ETIMEDOUT' : firstLine(text));
  return { retry: true, message: `cannot reach Redis at ${where} (${reason}); is it running and is the URL right?` };
}

function firstLine(text: string): string {
  return (text.split('\n')[0] ?? text).slice(0, 200);
}

/**
 * Connect with a bounded retry. Success returns a ready client; failure
 * throws one ServiceError line (exit code 1) that never contains the password.
 */
export async function connectRedis(options: ConnectOptions): Promise<RedisConnection> {
  const target = parseRedisUrl(options.url);
  const base = redisOptionsFor(target);
  const deadline = Date.now() + Math.max(options.connectTimeoutMs, 100);
  let attempt = 0;
  let verdict: Verdict = {
    retry: true,
    message: `cannot reach Redis at ${target.masked} (ETIMEDOUT); is it running and is the URL right?`,
  };
  for (;;) {
    attempt++;
    const remaining = deadline - Date.now();
    let lastError: unknown;
    const client = newClient({
      ...base,
      lazyConnect: true,
      // No reconnects while probing: this loop decides when to try again.
      retryStrategy: () => null,
      maxRetriesPerRequest: 0,
      connectTimeout: Math.max(200, Math.min(remaining, 5_000)),
      ...(options.connectionName !== undefined ? { connectionName: options.connectionName } : {}),
    });
    client.on('error', (error: unknown) => {
      lastError = error;
    });
    try {
      await client.connect();
      await client.ping();
      await warnIfPasswordUnused(client, target, options.logger);
      adoptLongLivedSettings(client, target, options);
      options.logger?.debug({ redis: target.masked, attempt }, 'connected to Redis');
      return { client, target };
    } catch (error) {
      // A refused or timed-out probe has already ended; disconnect() would then wait
      // ioredis's disconnectTimeout (2 s) for a socket that is gone, delaying the exit.
      if (client.status !== 'end') client.disconnect();
      verdict = explainRedisError(lastError ?? error, target);
    }
    const wait = Math.min(250 * 2 ** (attempt - 1), 2_000, deadline - Date.now());
    if (!verdict.retry || wait <= 0) break;
    await sleep(wait);
  }
  throw new ServiceError(verdict.message);
}

/**
 * A password given to a Redis that asks for none is accepted silently: the
 * user would believe the queue is protected when anyone who reaches the port
 * can use it. AUTH with the password alone tells (Redis answers "AUTH
 * <password> called without any password configured", or "no password is
 * set" before Redis 6). A named ACL user is left alone: that form of AUTH
 * succeeds for a user without a password and says nothing.
 */
async function warnIfPasswordUnused(client: Redis, target: RedisTarget, logger: Logger | undefined): Promise<void> {
  if (target.password === undefined || target.username !== undefined) return;
  try {
    await client.call('AUTH', target.password);
  } catch (error) {
    const text = error instanceof Error ? error.message : String(error);
    if (/without any password configured|no password is set/i.test(text)) {
      logger?.warn(
        { redis: target.masked },
        `Redis at ${target.masked} has no password, so the one in the URL protects nothing: the queue is NOT protected, anyone who reaches the port can read and change it; set requirepass (or an ACL user) in Redis, or keep it on a private network`,
      );
    }
  }
}

/** ioredis 6 types its options with a reply-mapping generic that exactOptionalPropertyTypes rejects when spread. */
function newClient(options: RedisOptions): Redis {
  return new Redis(options as RedisOptions & { replyMapping?: 'legacy' });
}

/** After the probe succeeded: reconnect on drops, as the command's lifetime needs. */
function adoptLongLivedSettings(client: Redis, target: RedisTarget, options: ConnectOptions): void {
  // ioredis reads these at reconnect and send time, so changing them now applies from here on.
  if (options.longLived) {
    client.options.retryStrategy = (times: number) => Math.min(500 * times, 5_000);
    client.options.maxRetriesPerRequest = null;
  } else {
    // About 10 s of reconnecting, then pending commands fail and the command exits with code 1.
    client.options.retryStrategy = (times: number) => (times > 10 ? null : Math.min(250 * times, 2_000));
    client.options.maxRetriesPerRequest = 3;
  }
  client.removeAllListeners('error');
  let warned = 0;
  client.on('error', (error: unknown) => {
    // A dead server gives an error per reconnect attempt; a few lines per outage are enough.
    if (warned++ < 3)
      options.logger?.warn(
        { redis: target.masked, reason: explainRedisError(error, target).message },
        'Redis connection trouble',
      );
  });
  client.on('ready', () => {
    if (warned > 0) options.logger?.info({ redis: target.masked }, 'Redis connection back');
    warned = 0;
  });
}

/**
 * Errors raised by ioredis or BullMQ during a command (after connecting):
 * give them the same one-line shape. Anything else passes through unchanged.
 */
export function asServiceError(error: unknown, target: RedisTarget): unknown {
  if (!(error instanceof Error)) return error;
  // Ours already (a plain boolean: a type guard here would narrow the Error away).
  const ours: boolean = isInputError(error) || isErrorOf(error, ServiceError);
  if (ours) return error;
  const code = (error as { code?: unknown }).code;
  const looksLikeRedis =
    /Connection is closed|max retries per request|ECONNREFUSED|ECONNRESET|ETIMEDOUT|WRONGPASS|NOAUTH|NOPERM|READONLY|OOM|LOADING/i.test(
      error.message,
    ) ||
    (typeof code === 'string' && /^E[A-Z]+$/.test(code) && error.message.includes('connect'));
  if (!looksLikeRedis) return error;
  const verdict = explainRedisError(error, target);
  const message = /Connection is closed|max retries/i.test(error.message)
    ? `lost the connection to Redis at ${target.masked}; run the command again when Redis is back`
    : verdict.message.startsWith('cannot reach') && /OOM|READONLY|LOADING/.test(error.message)
      ? `Redis at ${target.masked} refused a write: ${firstLine(error.message)}`
      : verdict.message;
  return new ServiceError(message);
}

/** Close politely, but never hang on a dead server. */
export async function closeRedis(client: Redis): Promise<void> {
  if (client.status === 'end') return;
  try {
    await Promise.race([client.quit(), sleep(1_000)]);
  } catch {
    // Already gone: nothing to close.
  }
  client.disconnect();
}
