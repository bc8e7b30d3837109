import { isAbsolute, relative } from 'node:path';

/** Quote a command-line word for a POSIX shell when it needs it. */
export function shellWord(word: string): string {
  return /^[A-Za-z0-9_./:=@%+-]+$/.test(word) ? word : `'${word.replace(/'/g, `'\\''`)}'`;
}

/** A path as short as it can be said from the current folder. */
export function displayPath(path: string): string {
  const rel = relative(process.cwd(), path);
  return rel === '' ? '.' : rel.startsWith('..') || isAbsolute(rel) ? path : rel;
}
