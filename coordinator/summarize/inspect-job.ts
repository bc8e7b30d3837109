import { isAbsolute, join, resolve } from 'node:path';
import { writeFileAtomic } from '../../shared/atomic-write.js';
import { canonicalJson } from '../../shared/canonical-json.js';
import { InputError } from '../../shared/errors.js';
import type { Metrics } from '../../shared/model.js';
import type { Point } from '../../shared/schemas/records.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob } from '../../shared/sweep/expand.js';
import { runModelAsync } from '../../worker/run-model.js';
import { renderTracePlot } from './charts/trace-plot.js';

export interface InspectOptions {
  readonly dir: string;
  /** A job key or a unique prefix of one (lower-case hex). */
  readonly job: string;
  /** Where to write the SVG; default `<dir>/report/inspect-<key>.svg`. */
  readonly out?: string;
}

export interface InspectResult {
  readonly key: string;
  readonly point: Point;
  readonly replicate: number;
  readonly seed: number;
  readonly metrics: Metrics;
  /** How the re-run compares with the stored record of this job. */
  readonly stored: 'equal' | 'different' | 'none';
  readonly storedMetrics: Metrics | null;
  /** Null when the model records no trace. */
  readonly svgPath: string | null;
  readonly panels: number;
}

/** Find a job by key or unique key prefix; InputError naming --job otherwise. */
export function findJob(jobs: Iterable<PlannedJob>, wanted: string): PlannedJob {
  if (!/^[0-9a-f]{1,32}$/.test(wanted)) {
    throw new InputError(
      `--job: "${wanted}" is not a job key; a key is up to 32 lower-case hex digits (a unique prefix is enough)`,
      [{ path: '--job', message: 'expected lower-case hex digits' }],
    );
  }
  const matches: PlannedJob[] = [];
  for (const job of jobs) {
    if (job.key.startsWith(wanted)) {
      matches.push(job);
      if (job.key === wanted || matches.length > 5) break;
    }
  }
  const exact = matches.find((j) => j.key === wanted);
  if (exact !== undefined) return exact;
  if (matches.length === 0) {
    throw new InputError(
      `--job: no job of this sweep has a key starting with "${wanted}" (keys are in the result records and in \`recallscape plan\` output)`,
      [{ path: '--job', message: 'no such job in this sweep' }],
    );
  }
  if (matches.length > 1) {
    const shown = matches
      .slice(0, 5)
      .map((j) => j.key)
      .join(', ');
    throw new InputError(
      `--job: "${wanted}" matches more than one job (${shown}${matches.length > 5 ? ', ...' : ''}); give more digits`,
      [{ path: '--job', message: 'ambiguous key prefix' }],
    );
  }
  return matches[0] as PlannedJob;
}

/** Metrics as they look after a trip through a record file. */
function normalise(metrics: unknown): string {
  return canonicalJson(JSON.parse(JSON.stringify(metrics)));
}

/**
 * Re-run one job of a sweep with tracing on, compare its metrics with the
 * stored record (the run is deterministic, so they must be equal), and draw
 * its recall trace.
 */
export async function inspectJob(options: InspectOptions): Promise<InspectResult> {
  const store = ResultStore.open(options.dir);
  const sweep = await store.readSweep();
  const job = findJob(expandJobs(sweep), options.job);
  const params = sweep.model.params.safeParse(job.params);
  if (!params.success) {
    throw new InputError(`job ${job.key}: its parameters are not valid for model ${sweep.model.id} any more`, [
      { path: '--job', message: params.error.message },
    ]);
  }
  const { output } = await runModelAsync(sweep.model, params.data, job.seed, { trace: true, key: job.key });

  let storedMetrics: Metrics | null = null;
  for await (const record of store.records()) {
    if (record.key === job.key) {
      storedMetrics = record.metrics;
      break;
    }
  }
  const stored =
    storedMetrics === null ? 'none' : normalise(storedMetrics) === normalise(output.metrics) ? 'equal' : 'different';

  const panels = output.trace ?? [];
  let svgPath: string | null = null;
  if (panels.length > 0) {
    const pointText = Object.entries(job.point)
      .map(([k, v]) => `${k} = ${String(v)}`)
      .join(', ');
    const plot = renderTracePlot({
      title: `${sweep.spec.name}: job ${job.key.slice(0, 12)} (replicate ${job.replicate}, seed ${job.seed})`,
      subtitle: [
        pointText === '' ? `model ${sweep.model.id} ${sweep.model.version}` : pointText,
        `success: ${String(output.metrics.success)}; shaded: cue window; sequences and positions counted from 0 (position 0 is the cue)`,
      ],
      panels,
      valueLabel: 'match',
    });
    svgPath =
      options.out === undefined
        ? join(store.reportDir, `inspect-${job.key}.svg`)
        : isAbsolute(options.out)
          ? options.out
          : resolve(options.out);
    await writeFileAtomic(svgPath, `<?xml version="1.0" encoding="UTF-8"?>\n${plot.svg}\n`);
  }
  return {
    key: job.key,
    point: job.point,
    replicate: job.replicate,
    seed: job.seed,
    metrics: output.metrics,
    stored,
    storedMetrics,
    svgPath,
    panels: panels.length,
  };
}
