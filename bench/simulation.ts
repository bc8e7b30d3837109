/**
 * Section "simulation": cost of one bcpnn-sequences trial at three network
 * sizes (L=6, K=2, defaults, noise 0.5), split into training and recall.
 * Wall-clock and CPU medians after warm-up; the machine line comes from
 * bench/index.ts. Goals (issue 6): (10,20) under 15 ms, (25,100) under 2 s.
 */
import { bcpnnSequences, recallTrial, trainTrial } from '../shared/models/bcpnn-sequences/index.js';
import { resolveShape } from '../shared/models/bcpnn-sequences/params.js';

interface Size {
  readonly H: number;
  readonly M: number;
  readonly warmup: number;
  readonly trials: number;
  /** Stop measuring after this much wall time (ms), keeping the section under a minute. */
  readonly budgetMs: number;
  readonly goalMs?: number;
}

const SIZES: readonly Size[] = [
  { H: 10, M: 20, warmup: 20, trials: 60, budgetMs: 8_000, goalMs: 15 },
  { H: 16, M: 50, warmup: 3, trials: 20, budgetMs: 10_000 },
  { H: 25, M: 100, warmup: 2, trials: 9, budgetMs: 20_000, goalMs: 2_000 },
];

const median = (xs: readonly number[]): number => {
  const sorted = [...xs].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  return sorted.length % 2 === 1
    ? (sorted[mid] as number)
    : ((sorted[mid - 1] as number) + (sorted[mid] as number)) / 2;
};

const cpuMs = (since: NodeJS.CpuUsage): number => {
  const d = process.cpuUsage(since);
  return (d.user + d.system) / 1000;
};

export async function run(): Promise<void> {
  console.log('bcpnn-sequences, L=6, K=2, defaults, noise 0.5, one thread; medians over trials with different seeds');
  console.log('size (H,M)   N      trials  train ms  recall ms  total ms  total cpu ms  us/recall step  goal');
  let peakHeap = 0;
  for (const size of SIZES) {
    const p = bcpnnSequences.params.parse({
      hypercolumns: size.H,
      minicolumns: size.M,
      sequenceLength: 6,
      sequenceCount: 2,
      noise: 0.5,
    });
    const shape = resolveShape(p);
    const recallSteps = shape.K * (shape.nCue + shape.nFree);
    for (let i = 0; i < size.warmup; i++) bcpnnSequences.run(p, 1000 + i);
    const train: number[] = [];
    const recall: number[] = [];
    const total: number[] = [];
    const cpu: number[] = [];
    const started = performance.now();
    for (let i = 0; i < size.trials && (i < 3 || performance.now() - started < size.budgetMs); i++) {
      const cpu0 = process.cpuUsage();
      const t0 = performance.now();
      const parts = trainTrial(p, i);
      const t1 = performance.now();
      recallTrial(p, i, parts);
      const t2 = performance.now();
      cpu.push(cpuMs(cpu0));
      train.push(t1 - t0);
      recall.push(t2 - t1);
      total.push(t2 - t0);
      peakHeap = Math.max(peakHeap, process.memoryUsage().heapUsed);
    }
    const med = median(total);
    const goal = size.goalMs === undefined ? '' : `< ${size.goalMs} ms: ${med < size.goalMs ? 'met' : 'NOT met'}`;
    console.log(
      [
        `(${size.H},${size.M})`.padEnd(12),
        String(shape.N).padEnd(6),
        String(total.length).padEnd(7),
        median(train).toFixed(2).padStart(8),
        median(recall).toFixed(2).padStart(10),
        med.toFixed(2).padStart(9),
        median(cpu).toFixed(2).padStart(13),
        ((median(recall) * 1000) / recallSteps).toFixed(2).padStart(15),
        ` ${goal}`,
      ].join(' '),
    );
  }
  const usage = process.resourceUsage();
  console.log(
    `peak memory: RSS ${(usage.maxRSS / 1024).toFixed(1)} MiB (whole process), heap used ${(peakHeap / 2 ** 20).toFixed(1)} MiB`,
  );
  console.log(
    '(wall-clock figures include waiting for the CPU on a shared machine; the cpu column is this process only)',
  );
}
