import { randomBytes } from 'node:crypto';
import { link, mkdir, readFile, unlink, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { writeFileAtomic } from '../atomic-write.js';
import { canonicalJson } from '../canonical-json.js';
import { InputError, SweepMismatchError } from '../errors.js';
import { type FailureRecord, FailureRecordSchema, type ResultRecord, ResultRecordSchema } from '../schemas/records.js';
import { type LoadedSweep, type StoredSweep, StoredSweepSchema, SWEEP_FORMAT, sweepFromStored } from '../sweep/load.js';
import { CODE_VERSION } from '../version.js';
import { type RecordCheck, recordIdentityCheck } from './record-identity.js';
import { fnv1a32, type ScanOptions, scanShards } from './shard-reader.js';
import { createShardWriter, type ShardFs, type ShardWriter } from './shard-writer.js';

export type { ScanOptions, StoreWarning } from './shard-reader.js';
export type { ShardFs, ShardWriter } from './shard-writer.js';
export { ShardWriteError } from './shard-writer.js';
export { isWriterId, newWriterId } from './writer-id.js';

/** A record's identity for duplicate checks: what a re-run of its job must reproduce. */
function fingerprint(record: ResultRecord): number {
  return fnv1a32(canonicalJson({ seed: record.seed, point: record.point, metrics: record.metrics }));
}

/**
 * One sweep's folder: sweep.json, append-only result and failure shards (one
 * file per writer process) and the report. The files are the truth; shards
 * from other machines merge by copying them into results/ and failures/.
 */
export class ResultStore {
  readonly dir: string;
  readonly resultsDir: string;
  readonly failuresDir: string;
  readonly reportDir: string;
  readonly sweepFile: string;
  private storedHash: string | undefined;
  /** The sweep as loaded by prepare() or readSweep(): readers check every record's identity against it. */
  private loaded: LoadedSweep | undefined;

  private constructor(dir: string) {
    this.dir = resolve(dir);
    this.resultsDir = join(this.dir, 'results');
    this.failuresDir = join(this.dir, 'failures');
    this.reportDir = join(this.dir, 'report');
    this.sweepFile = join(this.dir, 'sweep.json');
  }

  /** The folder `<root>/<name>`. */
  static at(root: string, name: string): ResultStore {
    return new ResultStore(join(root, name));
  }

  /** An existing sweep folder. */
  static open(dir: string): ResultStore {
    return new ResultStore(dir);
  }

  /** sweep.json as stored, or undefined when there is none. InputError if unreadable. */
  async readStored(): Promise<StoredSweep | undefined> {
    let text: string;
    try {
      text = await readFile(this.sweepFile, 'utf8');
    } catch (error) {
      const code = (error as NodeJS.ErrnoException).code;
      if (code === 'ENOENT' || code === 'ENOTDIR') return undefined;
      throw error;
    }
    let json: unknown;
    try {
      json = JSON.parse(text);
    } catch {
      throw new InputError(
        `${this.sweepFile} is not valid JSON; restore it from a copy, or delete the folder ${this.dir} to start over`,
        [{ path: 'sweep.json', message: 'not valid JSON' }],
      );
    }
    const parsed = StoredSweepSchema.safeParse(json);
    if (!parsed.success) {
      throw new InputError(
        `${this.sweepFile} is not a ${SWEEP_FORMAT} record; restore it, or delete the folder ${this.dir} to start over`,
        [{ path: 'sweep.json', message: parsed.error.issues[0]?.message ?? 'invalid' }],
      );
    }
    this.storedHash = parsed.data.hash;
    return parsed.data;
  }

  private mismatch(stored: StoredSweep, sweep: LoadedSweep): SweepMismatchError {
    const storedName = typeof stored.sweep['name'] === 'string' ? stored.sweep['name'] : '?';
    return new SweepMismatchError(
      `${this.dir} already holds a different sweep ("${storedName}", hash ${stored.hash.slice(0, 16)}; this one is "${sweep.spec.name}", hash ${sweep.hash.slice(0, 16)}). ` +
        `The sweep file (or the model version) changed in a way that changes its jobs. To keep both, pass another --out folder or give the sweep a new name; ` +
        `to start over, delete ${this.dir}.`,
    );
  }

  /**
   * Create the folder and sweep.json (atomically: a temporary file hard-linked
   * into place, which fails if another process got there first), or verify
   * that an existing sweep.json is this sweep. On a mismatch nothing is created.
   */
  async prepare(sweep: LoadedSweep): Promise<void> {
    const existing = await this.readStored();
    if (existing !== undefined) {
      if (existing.hash !== sweep.hash) throw this.mismatch(existing, sweep);
      await this.updateReport(existing, sweep);
    } else {
      try {
        await mkdir(this.dir, { recursive: true });
      } catch (error) {
        const code = (error as NodeJS.ErrnoException).code ?? 'error';
        throw new InputError(
          `cannot create the sweep folder ${this.dir} (${code}): a file is in the way or the place is not writable; choose another --out`,
          [{ path: '--out', message: `cannot create ${this.dir} (${code})` }],
        );
      }
      const stored: StoredSweep = {
        format: SWEEP_FORMAT,
        hash: sweep.hash,
        codeVersion: CODE_VERSION,
        createdAt: new Date().toISOString(),
        source: sweep.source,
        sweep: sweep.spec as unknown as Record<string, unknown>,
      };
      const temp = join(this.dir, `.sweep.json.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
      await writeFile(temp, `${JSON.stringify(stored, null, 2)}\n`, { flag: 'wx' });
      try {
        await link(temp, this.sweepFile);
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code !== 'EEXIST') throw error;
        // Another process created it meanwhile: it must be the same sweep.
        const other = await this.readStored();
        if (other !== undefined && other.hash !== sweep.hash) throw this.mismatch(other, sweep);
      } finally {
        await unlink(temp).catch(() => undefined);
      }
    }
    this.storedHash = sweep.hash;
    this.loaded = sweep;
    await mkdir(this.resultsDir, { recursive: true });
    await mkdir(this.failuresDir, { recursive: true });
  }

  /**
   * `report` is left out of the hash, so an edited report section passes the
   * hash check; store it, or `recallscape report` would keep the old defaults.
   * Only `sweep.report` changes; hash, codeVersion, createdAt and source stay.
   */
  private async updateReport(existing: StoredSweep, sweep: LoadedSweep): Promise<void> {
    if (canonicalJson(existing.sweep['report'] ?? null) === canonicalJson(sweep.spec.report)) return;
    const updated: StoredSweep = { ...existing, sweep: { ...existing.sweep, report: sweep.spec.report } };
    await writeFileAtomic(this.sweepFile, `${JSON.stringify(updated, null, 2)}\n`, { createFolder: false });
  }

  /** The sweep of this folder, re-validated under this build. InputError if there is none. */
  async readSweep(): Promise<LoadedSweep & { readonly codeVersion: string; readonly createdAt: string }> {
    const stored = await this.readStored();
    if (stored === undefined) {
      throw new InputError(
        `${this.dir} has no sweep.json, so it is not a sweep folder (run or submit a sweep file to create one)`,
        [{ path: 'sweep.json', message: `missing in ${this.dir}` }],
      );
    }
    const loaded = sweepFromStored(stored, this.sweepFile);
    this.loaded = loaded;
    return { ...loaded, codeVersion: stored.codeVersion, createdAt: stored.createdAt };
  }

  private async hash(): Promise<string> {
    if (this.storedHash !== undefined) return this.storedHash;
    const stored = await this.readStored();
    if (stored === undefined) {
      throw new InputError(
        `${this.dir} has no sweep.json, so it is not a sweep folder (run or submit a sweep file to create one)`,
        [{ path: 'sweep.json', message: `missing in ${this.dir}` }],
      );
    }
    return stored.hash;
  }

  /** Shard files for one writer (one per process; see newWriterId). `fs` replaces the file calls (tests inject faults). */
  openWriter(writer: string, fs?: ShardFs): ShardWriter {
    return createShardWriter(this.resultsDir, this.failuresDir, writer, ...(fs === undefined ? [] : [fs]));
  }

  /**
   * Every result of this sweep, streamed, once per job key (the first one
   * seen, shards in name order). A later record for the same key with other
   * seed, point or metrics is a 'conflict' warning; identical ones merge.
   * Memory: one key and a 32-bit fingerprint per job.
   */
  async *records(options: ScanOptions = {}): AsyncGenerator<ResultRecord> {
    const seen = new Map<string, number>();
    for await (const record of this.unique(seen, options)) yield record;
  }

  private async *unique(seen: Map<string, number>, options: ScanOptions): AsyncGenerator<ResultRecord> {
    // Every reader (report, resume, requeue, gather, progress) sets aside records
    // whose key or seed is not their content's: whoever can write to the queue
    // or to a shard must not be able to file a result under a real job's key.
    for await (const { record, file, line } of scanShards(
      this.resultsDir,
      ResultRecordSchema,
      await this.hash(),
      options,
      await this.identityCheck(options),
    )) {
      const fp = fingerprint(record);
      const before = seen.get(record.key);
      if (before === undefined) {
        seen.set(record.key, fp);
        yield record;
      } else if (before !== fp) {
        options.onWarning?.({
          kind: 'conflict',
          file,
          line,
          message: `${file}:${line}: job ${record.key} has a second record with different seed, point or metrics (results are corrupt or the model is not deterministic); the first one seen is kept`,
        });
      }
    }
  }

  /**
   * The identity check for this folder's records. A sweep this build cannot
   * rebuild (another model version, a model folder that moved) can still be
   * listed: its records are then read unchecked, with one warning saying so.
   */
  private async identityCheck(options: ScanOptions): Promise<RecordCheck | undefined> {
    if (this.loaded !== undefined) return recordIdentityCheck(this.loaded);
    try {
      return recordIdentityCheck(await this.readSweep());
    } catch (error) {
      if (!(error instanceof Error)) throw error;
      options.onWarning?.({
        kind: 'mismatch',
        file: this.sweepFile,
        line: 0,
        message: `${this.sweepFile}: this build cannot rebuild the sweep (${error.message.slice(0, 300)}), so record keys are not checked against it`,
      });
      return undefined;
    }
  }

  /** Keys of every job with a result. */
  async completedKeys(options: ScanOptions = {}): Promise<Set<string>> {
    const seen = new Map<string, number>();
    // The map fills as the records stream by; the records themselves are dropped.
    for await (const record of this.unique(seen, options)) void record;
    const keys = new Set(seen.keys());
    seen.clear();
    return keys;
  }

  /** Every failed attempt of this sweep, streamed (attempts are not merged). */
  async *failures(options: ScanOptions = {}): AsyncGenerator<FailureRecord> {
    for await (const { record } of scanShards(this.failuresDir, FailureRecordSchema, await this.hash(), options))
      yield record;
  }
}
