import { open } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { SWEEP_LIMITS } from './limits.js';

function refuse(path: string, why: string): InputError {
  return new InputError(`${path}: ${why}`, [{ path: '(file)', message: `${path}: ${why}` }]);
}

/**
 * The text of a sweep file, read no further than the size limit: a huge
 * file, a device or a pipe that never ends is refused after at most that
 * many bytes, never read whole.
 */
export async function readSweepFile(path: string): Promise<string> {
  const max = SWEEP_LIMITS.fileBytes;
  let handle: Awaited<ReturnType<typeof open>> | undefined;
  try {
    handle = await open(path, 'r');
    const info = await handle.stat();
    if (info.isDirectory()) throw refuse(path, 'is a folder, not a sweep file');
    if (info.isFile() && info.size > max) {
      throw refuse(path, `the sweep file is ${info.size} bytes, more than the ${max} a sweep file may have`);
    }
    const buffer = Buffer.alloc(max + 1);
    let filled = 0;
    while (filled < buffer.length) {
      const { bytesRead } = await handle.read(buffer, filled, buffer.length - filled, null);
      if (bytesRead === 0) break;
      filled += bytesRead;
    }
    if (filled > max) throw refuse(path, `the sweep file is more than the ${max} bytes a sweep file may have`);
    return buffer.toString('utf8', 0, filled);
  } catch (error) {
    if (error instanceof InputError) throw error;
    const code = (error as NodeJS.ErrnoException).code;
    const why =
      code === 'ENOENT'
        ? 'no such file'
        : code === 'EISDIR'
          ? 'is a folder, not a sweep file'
          : code === 'EACCES'
            ? 'permission denied'
            : String((error as Error).message);
    throw refuse(path, why);
  } finally {
    await handle?.close();
  }
}
