import { spawn } from 'node:child_process';
import { closeSync, existsSync, openSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';

const ROOT = resolve(import.meta.dirname, '..', '..');
const CLI = join(ROOT, 'bin', 'recallscape.js');

/** Run the CLI with stdout sent to a given file descriptor; collect stderr. */
function runWithStdout(args: readonly string[], fd: number): Promise<{ code: number | null; stderr: string }> {
  return new Promise((done, fail) => {
    const child = spawn(process.execPath, [CLI, ...args], { cwd: ROOT, stdio: ['ignore', fd, 'pipe'] });
    let stderr = '';
    child.stderr?.on('data', (chunk: Buffer) => (stderr += chunk.toString('utf8')));
    child.on('error', fail);
    child.on('close', (code) => done({ code, stderr }));
  });
}

describe('command output that cannot be written', () => {
  it.runIf(existsSync('/dev/full'))(
    'ends with exit code 1 and one line, not a stack trace, when stdout is full',
    async () => {
      const fd = openSync('/dev/full', 'w');
      try {
        const result = await runWithStdout(['schema'], fd);
        expect(result.code).toBe(1);
        expect(result.stderr.trim().split('\n')).toEqual([expect.stringContaining('cannot write the output: ENOSPC')]);
        expect(result.stderr).not.toMatch(/^\s+at /m);
      } finally {
        closeSync(fd);
      }
    },
  );
});
