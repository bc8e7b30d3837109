import { describe, expect, it } from 'vitest';
import { runCli } from './helpers.js';

// A port where nothing listens: if an option were checked only after connecting, these would fail with
// exit code 1 (Redis unreachable) instead of 2.
const NOWHERE = 'redis://127.0.0.1:1';

describe('whole-number options of the queue commands', () => {
  it('refuses a --lock-ms below its minimum with exit code 2 and a message naming the option, before reaching Redis', async () => {
    const result = await runCli(['worker', '--redis', NOWHERE, '--lock-ms', '100']);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe('recallscape: --lock-ms: must be a whole number from 500 to 3600000, got "100"\n');
  });

  it('refuses a --connect-timeout that is not a whole number with exit code 2, naming the option', async () => {
    const result = await runCli(['progress', 'no-such-folder', '--redis', NOWHERE, '--connect-timeout', '1.5s']);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe(
      'recallscape: --connect-timeout: must be a whole number from 100 to 600000, got "1.5s"\n',
    );
  });
});
