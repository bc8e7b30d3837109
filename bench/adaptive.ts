/**
 * Adaptive against exhaustive: the demo's three panels (tauZPre 50, 75, 100;
 * overlapLength 0 to 4) as an adaptive sweep starting from a grid with step
 * 0.2 in patternOverlap and 8 to 64 replicates, against a grid with step 0.05
 * and 64 replicates at every point. For every row it prints where each puts
 * the 50% border (the same row estimate for both: shared/refine/border.ts)
 * and the trials each used. Goal: the adaptive border within 0.05 of the
 * exhaustive one in every row, using at most 15% of its trials.
 *
 * Exhaustive is 21 x 5 x 3 x 64 = 20,160 trials (minutes on 2 cores);
 * RECALLSCAPE_BENCH_ADAPTIVE_REPLICATES lowers its 64 (and the adaptive
 * maximum with it) for a quicker, rougher look.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { DEMO_SWEEP_YAML } from '../coordinator/demo-sweep.js';
import { runAdaptiveSweep } from '../coordinator/run-adaptive.js';
import { runSweep } from '../coordinator/run-sweep.js';
import { createLogger } from '../shared/logger.js';
import { rowBorder } from '../shared/refine/border.js';
import { ResultStore } from '../shared/store/result-store.js';
import { parseSweepText } from '../shared/sweep/load.js';
import { Z_95 } from '../shared/wilson.js';

const silent = createLogger({
  name: 'bench',
  level: 'warn',
  destination: new Writable({ write: (_c, _e, done) => done() }),
});

/** Successes and trials per (tauZPre, overlapLength, patternOverlap). */
type Tally = Map<string, Map<number, { successes: number; trials: number }>>;

function demoWith(name: string, vary: string, tail: string): string {
  return DEMO_SWEEP_YAML.replace(/^name: .*$/m, `name: ${name}`)
    .replace(/^ {2}patternOverlap: .*$/m, `  patternOverlap: ${vary}`)
    .replace(/^replicates: \d+\n/m, '')
    .concat(tail);
}

async function runAndTally(yaml: string, adaptive: boolean): Promise<{ tally: Tally; trials: number; cpu: number }> {
  const sweep = parseSweepText(yaml, 'adaptive bench');
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-adaptive-'));
  try {
    const before = process.cpuUsage();
    const options = { sweep, root, threads: 2, logger: silent };
    const result = adaptive ? await runAdaptiveSweep(options) : await runSweep(options);
    if (result.failed > 0) throw new Error(`${result.failed} bench jobs failed`);
    const used = process.cpuUsage(before);
    const tally: Tally = new Map();
    let trials = 0;
    for await (const record of ResultStore.at(root, sweep.spec.name).records()) {
      const p = record.point as { tauZPre: number; overlapLength: number; patternOverlap: number };
      const row = `${p.tauZPre}|${p.overlapLength}`;
      const points = tally.get(row) ?? new Map();
      const at = points.get(p.patternOverlap) ?? { successes: 0, trials: 0 };
      at.trials += 1;
      if (record.metrics['success'] === true) at.successes += 1;
      points.set(p.patternOverlap, at);
      tally.set(row, points);
      trials += 1;
    }
    // CPU of this process: the main thread and the worker threads that ran the trials.
    return { tally, trials, cpu: (used.user + used.system) / 1e6 };
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

function borderOf(points: Map<number, { successes: number; trials: number }> | undefined): number | null {
  if (points === undefined) return null;
  return rowBorder(
    [...points].map(([x, t]) => ({ x, ...t })),
    0.5,
    Z_95,
  ).x;
}

export async function run(): Promise<void> {
  const max = Number(process.env['RECALLSCAPE_BENCH_ADAPTIVE_REPLICATES'] ?? '64');
  if (!Number.isInteger(max) || max < 8) throw new Error('RECALLSCAPE_BENCH_ADAPTIVE_REPLICATES must be >= 8');
  const exhaustiveYaml = `${demoWith('bench-exhaustive', '{ from: 0, to: 1, steps: 21 }', '')}replicates: ${max}\n`;
  const adaptiveYaml = demoWith(
    'bench-adaptive',
    '{ from: 0, to: 1, steps: 6 }',
    `refine:\n  replicates: { start: 8, max: ${max} }\n  rounds: 3\n  along: [patternOverlap]\n`,
  );
  console.log(
    `exhaustive: patternOverlap step 0.05, ${max} replicates per point; adaptive: step 0.2, 8 to ${max}, 3 rounds`,
  );
  const exhaustive = await runAndTally(exhaustiveYaml, false);
  const adaptive = await runAndTally(adaptiveYaml, true);
  console.log('tauZPre overlapLength  exhaustive  adaptive  difference  adaptive points');
  let worst = 0;
  for (const row of [...exhaustive.tally.keys()].sort((a, b) => a.localeCompare(b, 'en', { numeric: true }))) {
    const [tau, length] = row.split('|');
    const e = borderOf(exhaustive.tally.get(row));
    const a = borderOf(adaptive.tally.get(row));
    const diff = e === null && a === null ? 0 : e === null || a === null ? Number.POSITIVE_INFINITY : Math.abs(e - a);
    worst = Math.max(worst, diff);
    const show = (v: number | null): string => (v === null ? 'none' : v.toFixed(3));
    console.log(
      `${tau!.padStart(7)} ${length!.padStart(13)}  ${show(e).padStart(10)}  ${show(a).padStart(8)}  ${(Number.isFinite(diff) ? diff.toFixed(3) : 'one has none').padStart(10)}  ${String(adaptive.tally.get(row)?.size ?? 0).padStart(15)}`,
    );
  }
  const share = adaptive.trials / exhaustive.trials;
  console.log(
    `trials: exhaustive ${exhaustive.trials} (${exhaustive.cpu.toFixed(1)} s CPU), adaptive ${adaptive.trials} (${adaptive.cpu.toFixed(1)} s CPU) = ${(100 * share).toFixed(1)}% (goal <= 15%)`,
  );
  console.log(
    `largest border difference over the rows: ${Number.isFinite(worst) ? worst.toFixed(3) : 'a row has a border in one sweep only'} (goal <= 0.05)`,
  );
}
