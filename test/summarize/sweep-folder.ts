import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ResultStore } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob, toPayload } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { runJob } from '../../worker/run-job.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

/**
 * A cpu-burn sweep with success varying over the grid: successRate 0..1 in 11
 * steps (x) and burnMs 0 or 1 (y), 4 replicates: 22 points, 88 jobs.
 */
export const BURN_SWEEP = `
name: burn-grid
model: cpu-burn
seed: 5
replicates: 4
vary:
  successRate: { from: 0, to: 1, steps: 11 }
  burnMs: { list: [0, 1] }
report: { x: successRate, y: burnMs }
`;

export interface SweepFolder {
  readonly root: string;
  readonly dir: string;
  readonly sweep: LoadedSweep;
  readonly written: number;
  cleanup(): Promise<void>;
}

/**
 * Create a sweep folder through the real store and fill it with real job
 * results (runJob, as workers do) for the jobs `keep` accepts.
 */
export async function makeSweepFolder(
  text: string,
  keep: (job: PlannedJob) => boolean = () => true,
): Promise<SweepFolder> {
  const root = await mkdtemp(join(tmpdir(), 'rs-summarize-'));
  const sweep = parseSweepText(text, 'test-sweep.yaml');
  const store = ResultStore.at(root, sweep.spec.name);
  await store.prepare(sweep);
  const writer = store.openWriter('test-writer-1');
  let written = 0;
  for (const job of expandJobs(sweep)) {
    if (!keep(job)) continue;
    const outcome = runJob(toPayload(sweep, job), { writer: 'test-writer-1', run: 'run-1' });
    if (!outcome.ok) throw new Error(`job failed in the fixture: ${outcome.message}`);
    writer.appendResult(outcome.record);
    written += 1;
  }
  writer.close();
  return { root, dir: store.dir, sweep, written, cleanup: () => rm(root, { recursive: true, force: true }) };
}
