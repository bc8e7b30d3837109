import { readFileSync } from 'node:fs';
import type { RedisOptions } from 'ioredis';
import { z } from 'zod';
import { InputError } from './errors.js';

/** Environment variable read when no `--redis` option is given. */
export const REDIS_URL_ENV = 'RECALLSCAPE_REDIS_URL';
/** Optional PEM file with the CA that signed the Redis server's TLS certificate. */
export const REDIS_CA_ENV = 'RECALLSCAPE_REDIS_CA_FILE';

/** A Redis location, decoded, with the secret kept apart from everything printable. */
export interface RedisTarget {
  readonly tls: boolean;
  readonly host: string;
  readonly port: number;
  readonly db: number;
  readonly username: string | undefined;
  readonly password: string | undefined;
  /** The URL with the password replaced by `***`: the only form that may be printed. */
  readonly masked: string;
}

const PortSchema = z.coerce.number().int().min(1).max(65_535);
const DbSchema = z.coerce.number().int().min(0).max(10_000);

/**
 * The URL with its password replaced by `***`. Works on text that is not a
 * valid URL too (a typo must not leak the secret in the error about it).
 */
export function maskRedisUrl(url: string): string {
  // The user info ends at the LAST '@': a raw password may itself hold '/', '?',
  // '#' or '@', which is exactly the case where URL parsing fails.
  const at = url.lastIndexOf('@');
  if (at < 0) return url;
  const scheme = /^[a-z][a-z0-9+.-]*:\/\//i.exec(url)?.[0];
  if (scheme === undefined) return `***${url.slice(at)}`;
  const userInfo = url.slice(scheme.length, at);
  const colon = userInfo.indexOf(':');
  // Without a colon we cannot tell a user name from a secret: hide it all.
  const shown = colon < 0 ? '***' : `${userInfo.slice(0, colon)}:***`;
  return `${scheme}${shown}${url.slice(at)}`;
}

function bad(url: string, message: string): InputError {
  const masked = maskRedisUrl(url);
  return new InputError(
    `--redis: ${message} (got ${masked}); expected redis://[:password@]host[:port][/db] or rediss://... for TLS`,
    [{ path: '--redis', message }],
  );
}

/** Parse and check a `redis://` or `rediss://` URL. InputError (exit 2) on anything else. */
export function parseRedisUrl(url: string): RedisTarget {
  let parsed: URL;
  try {
    parsed = new URL(url);
  } catch {
    throw bad(url, 'not a valid URL');
  }
  if (parsed.protocol !== 'redis:' && parsed.protocol !== 'rediss:') {
    throw bad(url, `unsupported scheme "${parsed.protocol.replace(/:$/, '')}"; use redis or rediss`);
  }
  // URL keeps IPv6 literals in brackets; sockets want them bare.
  const host = parsed.hostname.replace(/^\[(.*)\]$/, '$1');
  if (host === '') throw bad(url, 'the URL has no host');
  const port = PortSchema.safeParse(parsed.port === '' ? 6379 : parsed.port);
  if (!port.success) throw bad(url, 'the port must be an integer from 1 to 65535');
  const dbText = parsed.pathname.replace(/^\//, '');
  const db = DbSchema.safeParse(dbText === '' ? 0 : dbText);
  if (!db.success || !/^\d*$/.test(dbText)) throw bad(url, 'the path must be a database number, e.g. /0');
  if (parsed.search !== '' || parsed.hash !== '') throw bad(url, 'query strings and fragments are not supported');
  let username: string | undefined;
  let password: string | undefined;
  try {
    username = parsed.username === '' ? undefined : decodeURIComponent(parsed.username);
    password = parsed.password === '' ? undefined : decodeURIComponent(parsed.password);
  } catch {
    throw bad(url, 'the user name or password is not valid percent-encoding');
  }
  const tls = parsed.protocol === 'rediss:';
  const hostPart = host.includes(':') ? `[${host}]` : host;
  const auth = password !== undefined ? `${parsed.username}:***@` : username !== undefined ? `${parsed.username}@` : '';
  const masked = `${tls ? 'rediss' : 'redis'}://${auth}${hostPart}:${port.data}${db.data === 0 ? '' : `/${db.data}`}`;
  return { tls, host, port: port.data, db: db.data, username, password, masked };
}

/**
 * The URL to use: the `--redis` option, else the environment variable.
 * Neither -> InputError naming both, since a command that needs Redis cannot guess.
 */
export function resolveRedisUrl(option: string | undefined, env: NodeJS.ProcessEnv = process.env): string {
  const fromEnv = env[REDIS_URL_ENV];
  const url = option ?? (fromEnv !== undefined && fromEnv !== '' ? fromEnv : undefined);
  if (url === undefined) {
    throw new InputError(`--redis: no Redis URL; pass --redis redis://host:6379 or set ${REDIS_URL_ENV}`, [
      { path: '--redis', message: `required (or set ${REDIS_URL_ENV})` },
    ]);
  }
  return url;
}

/**
 * ioredis options for a target. TLS uses the system's trusted CAs, plus the
 * PEM file in RECALLSCAPE_REDIS_CA_FILE when set (private CAs are common for
 * a Redis on a lab network).
 */
export function redisOptionsFor(target: RedisTarget, env: NodeJS.ProcessEnv = process.env): RedisOptions {
  const options: RedisOptions = { host: target.host, port: target.port, db: target.db };
  if (target.username !== undefined) options.username = target.username;
  if (target.password !== undefined) options.password = target.password;
  if (target.tls) {
    const caFile = env[REDIS_CA_ENV];
    let ca: string | undefined;
    if (caFile !== undefined && caFile !== '') {
      try {
        ca = readFileSync(caFile, 'utf8');
      } catch (error) {
        const code = (error as NodeJS.ErrnoException).code ?? 'unreadable';
        throw new InputError(`${REDIS_CA_ENV}: cannot read ${caFile} (${code})`, [
          { path: REDIS_CA_ENV, message: `cannot read ${caFile}` },
        ]);
      }
    }
    options.tls = ca === undefined ? { servername: target.host } : { servername: target.host, ca };
  }
  return options;
}
