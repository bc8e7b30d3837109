/**
 * Which model folders this process registered, and the time limit given on
 * the command line, if any. The thread pool hands both to every thread it
 * starts (each thread has its own registry and loads the same folders), so
 * the commands only register folders once, in the main thread. Small on
 * purpose: threads read it without loading the description machinery.
 */
export interface ExternalModelSettings {
  /** Absolute model folders (each a folder of model folders, or one model folder). */
  readonly folders: readonly string[];
  /** Overrides every external model's own `timeoutMs` when set. */
  readonly timeoutMs?: number;
}

let current: ExternalModelSettings = { folders: [] };

export function externalModelSettings(): ExternalModelSettings {
  return current;
}

export function addModelFolders(folders: readonly string[]): void {
  const known = new Set(current.folders);
  const added = folders.filter((f) => !known.has(f));
  if (added.length > 0) current = { ...current, folders: [...current.folders, ...added] };
}

export function setModelTimeout(timeoutMs: number | undefined): void {
  const { timeoutMs: _old, ...rest } = current;
  current = timeoutMs === undefined ? rest : { ...rest, timeoutMs };
}
