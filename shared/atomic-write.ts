import { randomBytes } from 'node:crypto';
import { mkdir, rename, rm, writeFile } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';

export interface AtomicWriteOptions {
  /** Create missing parent folders first (default true). Commands writing a user-named file pass false, so a typo makes no folders. */
  readonly createFolder?: boolean;
}

/**
 * Write a file so readers see the old content or the new, never half of it:
 * write a hidden temporary file in the same folder, then rename it over the
 * target. Async iterables are streamed, so a large table never sits in
 * memory whole. On any failure the temporary file is removed and the error is
 * rethrown unchanged.
 */
export async function writeFileAtomic(
  path: string,
  data: string | Uint8Array | AsyncIterable<string>,
  options: AtomicWriteOptions = {},
): Promise<void> {
  const dir = dirname(path);
  if (options.createFolder !== false) await mkdir(dir, { recursive: true });
  const temp = join(dir, `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  try {
    await writeFile(temp, data);
    await rename(temp, path);
  } catch (error) {
    await rm(temp, { force: true }).catch(() => undefined);
    throw error;
  }
}
