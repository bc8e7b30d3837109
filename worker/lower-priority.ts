import { readdirSync } from 'node:fs';
import { setPriority } from 'node:os';
import { InputError } from '../shared/errors.js';

/**
 * Lower the CPU priority of the whole process. Linux keeps a nice value per
 * thread: setPriority(0) changes only the calling thread (which every
 * simulation thread created later inherits), so the threads that exist
 * already (garbage collector helpers, I/O pool) are lowered one by one.
 * Call it before the thread pool exists.
 */
export function lowerPriority(nice: number): void {
  try {
    setPriority(nice);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? 'error';
    throw new InputError(`--nice: cannot set priority ${nice} (${code})`, [
      { path: '--nice', message: `cannot set priority (${code})` },
    ]);
  }
  let tasks: string[] = [];
  try {
    tasks = readdirSync('/proc/self/task');
  } catch {
    return; // Not Linux: the process-wide call above was all there is to do.
  }
  for (const tid of tasks) {
    try {
      setPriority(Number(tid), nice);
    } catch {
      // A thread that ended meanwhile.
    }
  }
}
