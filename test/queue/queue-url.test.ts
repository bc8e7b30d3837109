import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.js';
import { checkQueueUrl } from '../../shared/queue/backends.js';

// Expected texts are the URL rules of docs/operations.md, written by hand.

describe('checking a queue URL before anything connects', () => {
  it('gives the printable form of a Redis URL, with the password hidden', () => {
    expect(checkQueueUrl('redis://:s3cret@cache.lab:6380/2').masked).toBe('redis://:***@cache.lab:6380/2');
    expect(checkQueueUrl('rediss://10.0.0.5').masked).toBe('rediss://10.0.0.5:6379');
  });

  it('refuses a scheme no backend serves, naming --redis and the schemes that exist, without the password', () => {
    let error: unknown;
    try {
      checkQueueUrl('http://:hunter2@host:6379');
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(InputError);
    const message = (error as Error).message;
    expect(message).toBe('--redis: unsupported scheme "http"; use redis or rediss (got http://:***@host:6379)');
    expect(message).not.toContain('hunter2');
  });

  it('explains what a URL looks like when the text names no scheme', () => {
    expect(() => checkQueueUrl('localhost:6379')).toThrowError(/--redis: .*expected redis:\/\//);
  });
});
