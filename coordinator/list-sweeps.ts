import { readdir, stat } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { InputError } from '../shared/errors.js';
import { ResultStore, type StoreWarning } from '../shared/store/result-store.js';
import { countJobs } from '../shared/sweep/expand.js';

/** Whether the report in `<sweep>/report/` shows every result there is. */
export type ReportState = 'none' | 'current' | 'stale';

/** One sweep folder under a results root, as the files tell it (Redis is not asked). */
export interface SweepEntry {
  readonly name: string;
  readonly dir: string;
  readonly model: string | null;
  readonly hash: string;
  /** Jobs the sweep file defines; null when this build cannot read the sweep (see `problem`). */
  readonly planned: number | null;
  /** Jobs with a result on disk. */
  readonly done: number;
  /** Failed attempts recorded, and jobs among them that still have no result. */
  readonly failedAttempts: number;
  readonly failingJobs: number;
  /** Newest write to sweep.json or a result or failure shard (ISO time). */
  readonly lastActivity: string;
  readonly report: { readonly state: ReportState; readonly builtAt: string | null };
  /** Unreadable lines, conflicting records and the like, as counted while reading. */
  readonly warnings: number;
  /** Why `planned` is unknown (a sweep this build cannot rebuild), or null. */
  readonly problem: string | null;
}

/** Newest modification time of the files in a folder (not below it), or null when there are none. */
async function newestFile(folder: string): Promise<number | null> {
  let names: string[];
  try {
    names = await readdir(folder);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR') return null;
    throw error;
  }
  let newest: number | null = null;
  for (const name of names) {
    const info = await stat(join(folder, name)).catch(() => undefined);
    if (info?.isFile() === true && (newest === null || info.mtimeMs > newest)) newest = info.mtimeMs;
  }
  return newest;
}

async function describeSweep(dir: string): Promise<SweepEntry | undefined> {
  const store = ResultStore.open(dir);
  let stored: Awaited<ReturnType<ResultStore['readStored']>>;
  try {
    stored = await store.readStored();
  } catch (error) {
    if (error instanceof InputError) return undefined;
    throw error;
  }
  if (stored === undefined) return undefined;
  let planned: number | null = null;
  let problem: string | null = null;
  try {
    planned = countJobs(await store.readSweep());
  } catch (error) {
    // A sweep this build cannot rebuild (another model version, a model folder that moved)
    // is still listed, with what the files say.
    problem = error instanceof Error ? error.message : String(error);
  }
  let warnings = 0;
  const onWarning = (_w: StoreWarning): void => {
    warnings++;
  };
  const doneKeys = await store.completedKeys({ onWarning });
  let failedAttempts = 0;
  const failing = new Set<string>();
  for await (const failure of store.failures({ onWarning })) {
    failedAttempts++;
    if (!doneKeys.has(failure.key)) failing.add(failure.key);
  }
  const sweepJson = (await stat(store.sweepFile)).mtimeMs;
  const activity = Math.max(
    sweepJson,
    (await newestFile(store.resultsDir)) ?? 0,
    (await newestFile(store.failuresDir)) ?? 0,
  );
  const built = await newestFile(store.reportDir);
  const name = typeof stored.sweep['name'] === 'string' ? stored.sweep['name'] : dir;
  const model = typeof stored.sweep['model'] === 'string' ? stored.sweep['model'] : null;
  return {
    name,
    dir: store.dir,
    model,
    hash: stored.hash,
    planned,
    done: doneKeys.size,
    failedAttempts,
    failingJobs: failing.size,
    lastActivity: new Date(activity).toISOString(),
    report: {
      // By file times: a report written after the last write to the sweep shows all of it.
      state: built === null ? 'none' : built >= activity ? 'current' : 'stale',
      builtAt: built === null ? null : new Date(built).toISOString(),
    },
    warnings,
    problem,
  };
}

/**
 * Every sweep folder directly under `root` (a folder holding sweep.json),
 * newest activity first; `root` may also be one sweep folder itself.
 * Folders without a readable sweep.json are not sweeps and are skipped.
 */
export async function listSweeps(root: string): Promise<SweepEntry[]> {
  const where = resolve(root);
  let info: Awaited<ReturnType<typeof stat>>;
  try {
    info = await stat(where);
  } catch {
    throw new InputError(`results root ${root} does not exist; give the --out folder of run or submit`, [
      { path: 'root', message: `${root} does not exist` },
    ]);
  }
  if (!info.isDirectory()) {
    throw new InputError(`results root ${root} is not a folder`, [{ path: 'root', message: `${root} is a file` }]);
  }
  const itself = await describeSweep(where);
  if (itself !== undefined) return [itself];
  const entries: SweepEntry[] = [];
  const children = (await readdir(where, { withFileTypes: true })).filter((d) => d.isDirectory());
  for (const child of children.sort((a, b) => a.name.localeCompare(b.name))) {
    const entry = await describeSweep(join(where, child.name));
    if (entry !== undefined) entries.push(entry);
  }
  return entries.sort((a, b) => b.lastActivity.localeCompare(a.lastActivity) || a.name.localeCompare(b.name));
}
